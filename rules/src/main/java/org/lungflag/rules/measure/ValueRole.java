package org.lungflag.rules.measure;

/** Whether a value is a device setting (what was ordered) or a measurement (what happened). */
public enum ValueRole {
    SETTING,
    MEASUREMENT
}
