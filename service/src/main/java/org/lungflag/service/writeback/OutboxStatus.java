package org.lungflag.service.writeback;

/** Where an outbox row is. */
public enum OutboxStatus {
    PENDING,
    SENDING,
    DELIVERED,
    /** Silent mode: audited, never sent. */
    SUPPRESSED,
    /** Refused permanently by the server or by validation; the reason is in the quarantine. */
    QUARANTINED
}
