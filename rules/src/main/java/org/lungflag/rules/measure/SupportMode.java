package org.lungflag.rules.measure;

/** The kind of respiratory support in force. */
public enum SupportMode {
    INVASIVE_VENTILATION,
    /** Non-invasive ventilation or CPAP by mask. */
    NON_INVASIVE_VENTILATION,
    HIGH_FLOW_NASAL_OXYGEN,
    CONVENTIONAL_OXYGEN,
    ROOM_AIR;

    public boolean isInvasive() {
        return this == INVASIVE_VENTILATION;
    }
}
