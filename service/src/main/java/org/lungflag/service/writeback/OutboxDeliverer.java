package org.lungflag.service.writeback;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.rest.client.api.IGenericClient;
import ca.uhn.fhir.rest.client.exceptions.FhirClientConnectionException;
import ca.uhn.fhir.rest.server.exceptions.BaseServerResponseException;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.time.Clock;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.concurrent.ThreadLocalRandom;
import org.hl7.fhir.instance.model.api.IIdType;
import org.hl7.fhir.r4.model.Bundle;
import org.hl7.fhir.r4.model.IdType;
import org.hl7.fhir.r4.model.Provenance;
import org.hl7.fhir.r4.model.Reference;
import org.hl7.fhir.r4.model.Resource;
import org.lungflag.rules.quality.DataQualityReason;
import org.lungflag.service.audit.QuarantineRepository;
import org.lungflag.service.audit.QuarantineRepository.Refusal;
import org.lungflag.service.audit.QuarantineStage;
import org.lungflag.service.metrics.LungflagMetrics;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.scheduling.annotation.Scheduled;
import org.springframework.stereotype.Component;
import org.springframework.transaction.support.TransactionTemplate;

/**
 * Sends outbox rows to the FHIR server, one transaction per row, in order per patient. A Flag is written with a
 * conditional update on its episode identifier (created the first time, updated in place after), then its
 * Provenance is recorded only when the Flag actually got a new version. Transient failures (connection errors,
 * 5xx, 408, 409, 429, and 401/403 while the credentials are being fixed) are retried with exponential backoff and
 * jitter until the server accepts; any other 4xx is permanent and goes to quarantine with the server's
 * OperationOutcome. Nothing accepted into the outbox is dropped.
 */
@Component
public class OutboxDeliverer {

    private static final Logger log = LoggerFactory.getLogger(OutboxDeliverer.class);

    private final OutboxRepository outbox;
    private final IGenericClient client;
    private final FhirContext fhir;
    private final OutgoingValidator validator;
    private final QuarantineRepository quarantine;
    private final WritebackProperties properties;
    private final TransactionTemplate tx;
    private final JdbcClient jdbc;
    private final Clock clock;
    private final LungflagMetrics metrics;
    private final ObjectMapper json = new ObjectMapper();

    OutboxDeliverer(
            OutboxRepository outbox,
            IGenericClient client,
            FhirContext fhir,
            OutgoingValidator validator,
            QuarantineRepository quarantine,
            WritebackProperties properties,
            TransactionTemplate tx,
            JdbcClient jdbc,
            Clock clock,
            LungflagMetrics metrics) {
        this.outbox = outbox;
        this.client = client;
        this.fhir = fhir;
        this.validator = validator;
        this.quarantine = quarantine;
        this.properties = properties;
        this.tx = tx;
        this.jdbc = jdbc;
        this.clock = clock;
        this.metrics = metrics;
    }

    @Scheduled(fixedDelayString = "${lungflag.writeback.poll-interval:500ms}")
    void poll() {
        try {
            while (deliverBatch() > 0) {
                // keep draining while there is work
            }
        } catch (RuntimeException e) {
            log.warn(
                    "outbox delivery round failed ({}); retrying at the next poll",
                    e.getClass().getSimpleName());
        }
    }

    /** Delivers one batch. Returns how many rows were attempted. */
    public int deliverBatch() {
        List<OutboxRow> rows = outbox.claim(properties.batchSize(), properties.lease());
        for (OutboxRow row : rows) {
            deliver(row);
        }
        return rows.size();
    }

    void deliver(OutboxRow row) {
        OutboxPayload payload;
        try {
            payload = json.readValue(row.payload(), OutboxPayload.class);
        } catch (Exception e) {
            permanent(
                    row,
                    DataQualityReason.OUTGOING_INVALID,
                    "the outbox payload is not readable: " + e.getMessage(),
                    null);
            return;
        }
        try {
            String flagRef = row.resultRef();
            if (!"FLAG_WRITTEN".equals(outbox.step(row.id()))) {
                Bundle transaction = fhir.newJsonParser().parseResource(Bundle.class, payload.transaction());
                List<String> invalid = validate(transaction, payload.provenance());
                if (!invalid.isEmpty()) {
                    permanent(row, DataQualityReason.OUTGOING_INVALID, String.join("; ", invalid), null);
                    return;
                }
                long started = System.nanoTime();
                Bundle response;
                try {
                    response = client.transaction().withBundle(transaction).execute();
                    metrics.fhirWrite(
                            java.time.Duration.ofNanos(System.nanoTime() - started),
                            true,
                            row.kind().name());
                } catch (RuntimeException e) {
                    metrics.fhirWrite(
                            java.time.Duration.ofNanos(System.nanoTime() - started),
                            false,
                            row.kind().name());
                    throw e;
                }
                flagRef = firstFlagLocation(response);
                if (row.kind() == OutboxKind.FLAG && flagRef != null) {
                    String ref = flagRef;
                    boolean changed = flagChanged(row.episodeKey(), ref, response);
                    tx.executeWithoutResult(s -> {
                        outbox.flagWritten(row.id(), ref);
                        recordFlag(row.episodeKey(), ref);
                    });
                    if (!changed) {
                        outbox.delivered(row.id(), ref);
                        return;
                    }
                }
            }
            if (row.kind() == OutboxKind.FLAG && payload.provenance() != null && flagRef != null) {
                recordProvenance(payload.provenance(), flagRef);
            }
            outbox.delivered(row.id(), flagRef);
        } catch (FhirClientConnectionException e) {
            transient_(row, "FHIR server unreachable: " + e.getClass().getSimpleName());
        } catch (BaseServerResponseException e) {
            int status = e.getStatusCode();
            if (status >= 500 || status == 408 || status == 409 || status == 429 || status == 401 || status == 403) {
                transient_(row, "FHIR server answered " + status);
            } else {
                permanent(
                        row,
                        DataQualityReason.REJECTED_BY_SERVER,
                        "the FHIR server refused the write with HTTP " + status,
                        e.getResponseBody());
            }
        } catch (RuntimeException e) {
            // not an answer from the server: a bug or an unexpected state; keep the row, and say where
            log.warn(
                    "outbox row {} ({}): unexpected {}",
                    row.id(),
                    row.kind(),
                    e.getClass().getSimpleName(),
                    e);
            transient_(row, e.getClass().getSimpleName());
        }
    }

    private List<String> validate(Bundle transaction, String provenanceJson) {
        if (!properties.validate()) {
            return List.of();
        }
        List<String> errors = new ArrayList<>();
        for (Bundle.BundleEntryComponent entry : transaction.getEntry()) {
            for (String error : validator.errors(entry.getResource())) {
                errors.add(entry.getResource().fhirType() + ": " + error);
            }
        }
        if (provenanceJson != null) {
            Provenance p = fhir.newJsonParser().parseResource(Provenance.class, provenanceJson);
            if (!p.hasTarget()) {
                p.addTarget(new Reference("Flag/validation-placeholder/_history/1"));
            }
            for (String error : validator.errors(p)) {
                errors.add("Provenance: " + error);
            }
        }
        return errors;
    }

    private static String firstFlagLocation(Bundle response) {
        for (Bundle.BundleEntryComponent entry : response.getEntry()) {
            String location = entry.getResponse().getLocation();
            if (location != null && location.startsWith("Flag/")) {
                IIdType id = new IdType(location);
                return "Flag/" + id.getIdPart() + "/_history/" + id.getVersionIdPart();
            }
        }
        return null;
    }

    /** A new Flag (201) or a new version since the one recorded for the episode. */
    private boolean flagChanged(String episodeKey, String versionedRef, Bundle response) {
        for (Bundle.BundleEntryComponent entry : response.getEntry()) {
            String location = entry.getResponse().getLocation();
            if (location != null
                    && location.startsWith("Flag/")
                    && entry.getResponse().getStatus().startsWith("201")) {
                return true;
            }
        }
        String known = jdbc
                .sql("SELECT flag_version FROM episode WHERE episode_key = :key")
                .param("key", episodeKey)
                .query((rs, n) -> java.util.Optional.ofNullable(rs.getString(1)))
                .list()
                .stream()
                .findFirst()
                .flatMap(v -> v)
                .orElse(null);
        return known == null || !versionedRef.endsWith("/_history/" + known);
    }

    private void recordFlag(String episodeKey, String versionedRef) {
        IdType id = new IdType(versionedRef);
        jdbc.sql("UPDATE episode SET flag_id = :id, flag_version = :version WHERE episode_key = :key")
                .param("id", id.getIdPart())
                .param("version", id.getVersionIdPart())
                .param("key", episodeKey)
                .update();
    }

    /** Writes the Provenance unless one already targets this exact Flag version (a retry after a crash). */
    private void recordProvenance(String provenanceJson, String flagRef) {
        IdType flag = new IdType(flagRef);
        Bundle existing = client.search()
                .forResource(Provenance.class)
                .where(Provenance.TARGET.hasId("Flag/" + flag.getIdPart()))
                .count(100)
                .returnBundle(Bundle.class)
                .execute();
        for (Bundle.BundleEntryComponent e : existing.getEntry()) {
            if (e.getResource() instanceof Provenance p) {
                for (Reference target : p.getTarget()) {
                    if (flagRef.equals(target.getReference())) {
                        return;
                    }
                }
            }
        }
        Provenance provenance = fhir.newJsonParser().parseResource(Provenance.class, provenanceJson);
        provenance.getTarget().clear();
        provenance.addTarget(new Reference(flagRef));
        client.create().resource((Resource) provenance).execute();
    }

    private void transient_(OutboxRow row, String error) {
        Duration delay = backoff(row.attempts());
        outbox.retryLater(row.id(), clock.instant().plus(delay), error);
        log.warn("outbox row {} ({}) not delivered: {}; retry in {} s", row.id(), row.kind(), error, delay.toSeconds());
    }

    private void permanent(OutboxRow row, DataQualityReason reason, String detail, String serverOutcome) {
        tx.executeWithoutResult(s -> {
            outbox.quarantined(row.id(), detail);
            quarantine.add(new Refusal(
                    QuarantineStage.WRITE_BACK,
                    row.kind() == OutboxKind.FLAG ? "Flag" : "Observation",
                    row.episodeKey(),
                    null,
                    row.patientId(),
                    reason,
                    "outbox row " + row.id() + ": " + detail,
                    serverOutcome,
                    null,
                    null));
        });
        log.error("outbox row {} ({}) refused permanently: {}", row.id(), row.kind(), reason.code());
        log.debug("outbox row {}: {}", row.id(), detail);
    }

    /** Exponential backoff from the initial delay, capped, with ±50 % jitter. */
    Duration backoff(int attempts) {
        double base = properties.initialBackoff().toMillis() * Math.pow(2, Math.max(0, attempts - 1));
        double capped = Math.min(base, properties.maxBackoff().toMillis());
        double jittered = capped * (0.5 + ThreadLocalRandom.current().nextDouble());
        return Duration.ofMillis(Math.max(100, (long) jittered));
    }

    Instant now() {
        return clock.instant();
    }
}
