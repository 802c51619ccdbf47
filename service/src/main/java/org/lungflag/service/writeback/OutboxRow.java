package org.lungflag.service.writeback;

import java.time.Instant;

/**
 * One thing to write.
 *
 * @param payload an {@link OutboxPayload} as JSON
 * @param resultRef after the Flag write: the versioned reference it produced (so a retry only redoes the
 *     Provenance step)
 */
public record OutboxRow(
        long id,
        OutboxKind kind,
        String episodeKey,
        String patientId,
        Long evaluationId,
        String payload,
        OutboxStatus status,
        int attempts,
        Instant nextAttemptAt,
        String lastError,
        Instant createdAt,
        Instant deliveredAt,
        String resultRef) {}
