package org.lungflag.rules.patient;

/**
 * Sex for clinical use, as needed by the predicted-body-weight formulas. Taken from a sex-for-clinical-use element
 * where the record has one, else from administrative gender (clinical-reference §6.1).
 */
public enum Sex {
    MALE,
    FEMALE,
    UNKNOWN
}
