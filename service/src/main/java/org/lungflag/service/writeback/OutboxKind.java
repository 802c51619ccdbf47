package org.lungflag.service.writeback;

/** What an outbox row writes. */
public enum OutboxKind {
    /** An advisory Flag state (create, escalate, de-escalate, resolve, expire) and its Provenance. */
    FLAG,
    /** Derived-index Observations of one evaluation. */
    INDICES
}
