package org.lungflag.service.writeback;

/**
 * What an outbox row sends: a FHIR transaction Bundle (conditional updates by identifier, so a retry or a second
 * instance can never create a second copy) and, for Flag rows, the Provenance to record once the Flag version is
 * known.
 *
 * @param transaction the transaction Bundle as FHIR JSON
 * @param provenance the Provenance as FHIR JSON without its target (set at delivery), or {@code null}
 */
public record OutboxPayload(String transaction, String provenance) {}
