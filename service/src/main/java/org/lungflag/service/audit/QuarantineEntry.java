package org.lungflag.service.audit;

import java.time.Instant;

/**
 * One refused input or output.
 *
 * @param reasonCode a code of the data-quality CodeSystem
 * @param detail a plain sentence naming what was wrong and where (no patient data)
 * @param serverOutcome the FHIR server's OperationOutcome (JSON) for refused writes, else {@code null}
 * @param bodyExcerpt the start of an unparseable body, kept only when there is no resource reference to go back to
 */
public record QuarantineEntry(
        long id,
        QuarantineStage stage,
        String resourceType,
        String resourceId,
        String versionId,
        String patientId,
        String reasonCode,
        String detail,
        String serverOutcome,
        String bodySha256,
        String bodyExcerpt,
        Instant createdAt) {

    public String reference() {
        if (resourceType == null || resourceId == null) {
            return null;
        }
        return versionId == null
                ? resourceType + "/" + resourceId
                : resourceType + "/" + resourceId + "/_history/" + versionId;
    }
}
