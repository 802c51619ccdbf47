package org.lungflag.service.intake;

import java.time.Instant;

/**
 * A resource waiting to be processed: the body as received and the reference it claims. {@code versionId} and
 * {@code resourceId} are what the channel said; the processor checks them against the body.
 */
public record InboxItem(
        long id,
        String resourceType,
        String resourceId,
        String versionId,
        InboxChannel channel,
        String body,
        String bodySha256,
        Instant receivedAt,
        int attempts) {

    /** A short reference for logs: never content. */
    public String reference() {
        return versionId == null
                ? resourceType + "/" + resourceId
                : resourceType + "/" + resourceId + "/_history/" + versionId;
    }
}
