package org.lungflag.service.writeback;

/** What Lungflag writes to the FHIR server (design.md). */
public enum WritebackMode {
    /** Everything is evaluated and audited; nothing is written to the record (outbox rows are kept as SUPPRESSED). */
    SILENT,
    /** Advisory Flags with their Provenance. */
    FLAGS,
    /** Flags, Provenance and the derived-index Observations. */
    FLAGS_AND_INDICES
}
