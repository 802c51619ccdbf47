package org.lungflag.service.evaluation;

import java.time.Instant;
import org.lungflag.service.normalize.NormalizedResource;

/**
 * One normalized resource version to apply to a patient, with where it came from.
 *
 * @param inboxId the inbox row it came from, or {@code null} for hydration
 * @param channel e.g. REST_HOOK, CATCH_UP, HYDRATION
 */
record Work(Long inboxId, NormalizedResource resource, String channel, String bodySha256, Instant receivedAt) {}
