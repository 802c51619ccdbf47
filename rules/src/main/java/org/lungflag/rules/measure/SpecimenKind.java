package org.lungflag.rules.measure;

/**
 * Where a blood sample came from (clinical-reference §10.5). Arterial-only indices (P/F, A–a gradient, OI) refuse
 * anything but {@link #ARTERIAL}; values that are not blood samples carry {@link #NOT_APPLICABLE}.
 */
public enum SpecimenKind {
    ARTERIAL,
    VENOUS,
    MIXED_VENOUS,
    CAPILLARY,
    UNKNOWN,
    NOT_APPLICABLE
}
