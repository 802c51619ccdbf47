package org.lungflag.service.intake.bus;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.parser.DataFormatException;
import io.micrometer.core.instrument.Counter;
import io.micrometer.core.instrument.MeterRegistry;
import java.util.List;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.hl7.fhir.instance.model.api.IBaseResource;
import org.hl7.fhir.r4.model.Observation;
import org.lungflag.rules.quality.DataQualityReason;
import org.lungflag.service.audit.QuarantineRepository;
import org.lungflag.service.audit.QuarantineRepository.Refusal;
import org.lungflag.service.audit.QuarantineStage;
import org.lungflag.service.audit.ReceivedResourceRepository;
import org.lungflag.service.intake.InboxChannel;
import org.lungflag.service.intake.InboxRepository;
import org.lungflag.service.intake.InboxSignal;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;
import org.springframework.kafka.listener.BatchMessageListener;
import org.springframework.transaction.support.TransactionTemplate;

/**
 * Records one poll of bus records in one database transaction: each usable Observation becomes an inbox row (channel
 * BUS), each unusable record a quarantine entry with its reason and its topic, partition and offset; a version
 * already received or waiting is counted as a redelivery and changes nothing. The method returns only after that
 * transaction committed, and the container commits the poll's offsets only then (ack mode BATCH), so nothing
 * acknowledged to the bus is lost. If the database refuses, it throws: the offsets stay where they were and the poll
 * is recorded again after a pause.
 */
final class BusRecordHandler implements BatchMessageListener<String, String> {

    private static final Logger log = LoggerFactory.getLogger(BusRecordHandler.class);

    private final FhirContext fhir;
    private final InboxRepository inbox;
    private final InboxSignal signal;
    private final QuarantineRepository quarantine;
    private final ReceivedResourceRepository received;
    private final TransactionTemplate tx;
    private final Counter recordedCount;
    private final Counter redeliveredCount;
    private final Counter quarantinedCount;

    BusRecordHandler(
            FhirContext fhir,
            InboxRepository inbox,
            InboxSignal signal,
            QuarantineRepository quarantine,
            ReceivedResourceRepository received,
            TransactionTemplate tx,
            MeterRegistry meters) {
        this.fhir = fhir;
        this.inbox = inbox;
        this.signal = signal;
        this.quarantine = quarantine;
        this.received = received;
        this.tx = tx;
        this.recordedCount = counter(meters, "recorded");
        this.redeliveredCount = counter(meters, "redelivered");
        this.quarantinedCount = counter(meters, "quarantined");
    }

    private static Counter counter(MeterRegistry meters, String outcome) {
        return Counter.builder("lungflag.intake.bus.records")
                .description("Bus records by what intake did with them")
                .tag("outcome", outcome)
                .register(meters);
    }

    private static final class Tally {
        int recorded;
        int redelivered;
        int quarantined;
    }

    @Override
    public void onMessage(List<ConsumerRecord<String, String>> records) {
        Tally tally = tx.execute(status -> {
            Tally t = new Tally();
            for (ConsumerRecord<String, String> r : records) {
                handle(r, t);
            }
            return t;
        });
        recordedCount.increment(tally.recorded);
        redeliveredCount.increment(tally.redelivered);
        quarantinedCount.increment(tally.quarantined);
        if (tally.recorded > 0) {
            signal.recorded();
        }
        if (tally.quarantined > 0 || tally.redelivered > 0) {
            log.info(
                    "bus poll of {} records: {} recorded, {} redelivered, {} quarantined",
                    records.size(),
                    tally.recorded,
                    tally.redelivered,
                    tally.quarantined);
        }
    }

    private void handle(ConsumerRecord<String, String> r, Tally t) {
        String where = "bus record " + r.topic() + "-" + r.partition() + "@" + r.offset();
        String body = r.value();
        if (body == null || body.isBlank()) {
            refuse(
                    t,
                    null,
                    null,
                    null,
                    DataQualityReason.MALFORMED_RESOURCE,
                    where + " has no value; a FHIR R4 " + "Observation as JSON is expected",
                    null);
            return;
        }
        IBaseResource resource;
        try {
            resource = fhir.newJsonParser().parseResource(body);
        } catch (DataFormatException | ClassCastException e) {
            refuse(
                    t,
                    null,
                    null,
                    null,
                    DataQualityReason.MALFORMED_RESOURCE,
                    where + " is not a parseable FHIR R4" + " JSON resource: " + firstLine(e.getMessage()),
                    body);
            return;
        }
        String type = resource.fhirType();
        String id = resource.getIdElement().getIdPart();
        if (!(resource instanceof Observation observation)) {
            refuse(
                    t,
                    type,
                    id,
                    null,
                    DataQualityReason.UNSUPPORTED_RESOURCE_TYPE,
                    where + " is a " + type + "; the topic carries Observations only",
                    body);
            return;
        }
        String version = observation.getMeta().getVersionId();
        if (version == null) {
            version = observation.getIdElement().getVersionIdPart();
        }
        if (id == null) {
            refuse(
                    t,
                    type,
                    null,
                    version,
                    DataQualityReason.MALFORMED_RESOURCE,
                    where + " is an Observation without"
                            + " an id; Lungflag needs the id the FHIR server holds it under",
                    body);
            return;
        }
        if (version == null) {
            refuse(
                    t,
                    type,
                    id,
                    null,
                    DataQualityReason.MALFORMED_RESOURCE,
                    where + " (Observation/" + id + ") has no"
                            + " meta.versionId; Lungflag needs the stored version to cite it exactly and to recognize"
                            + " redeliveries",
                    body);
            return;
        }
        if (received.seen("Observation", id, version) || inbox.isPending("Observation", id, version)) {
            t.redelivered++;
            return;
        }
        String subject = observation.getSubject().getReferenceElement().getIdPart();
        if (r.key() == null || !r.key().equals(subject)) {
            // still recorded: evaluation orders by clinical time, but this patient's records may now be read by two
            // instances and their partitions carry no order for it
            log.warn(
                    "{} (Observation/{}) is keyed {} but its subject is Patient/{}; key records by patient id",
                    where,
                    id,
                    r.key() == null ? "(no key)" : r.key(),
                    subject);
        }
        inbox.add("Observation", id, version, InboxChannel.BUS, body);
        t.recorded++;
    }

    private void refuse(
            Tally t, String type, String id, String version, DataQualityReason reason, String detail, String body) {
        quarantine.add(new Refusal(
                QuarantineStage.INTAKE,
                type,
                id,
                version,
                null,
                reason,
                detail,
                null,
                InboxRepository.sha256(body),
                body));
        t.quarantined++;
        log.warn("{}", detail.length() > 300 ? detail.substring(0, 300) + "…" : detail);
    }

    private static String firstLine(String message) {
        if (message == null) {
            return "no detail";
        }
        int nl = message.indexOf('\n');
        String line = nl < 0 ? message : message.substring(0, nl);
        return line.length() > 300 ? line.substring(0, 300) + "…" : line;
    }
}
