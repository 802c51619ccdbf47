package org.lungflag.service.audit;

/** Where in the flow an input or output was refused. */
public enum QuarantineStage {
    /** At the hook, the catch-up search or the bus: not a usable FHIR resource. */
    INTAKE,
    /** In normalization: a resource Lungflag cannot use (unknown code, unit, implausible value...). */
    NORMALIZATION,
    /** On the way out: the FHIR server refused a write permanently, or validation failed. */
    WRITE_BACK
}
