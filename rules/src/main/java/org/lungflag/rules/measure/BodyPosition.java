package org.lungflag.rules.measure;

public enum BodyPosition {
    PRONE,
    SUPINE,
    OTHER
}
