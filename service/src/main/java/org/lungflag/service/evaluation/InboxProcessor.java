package org.lungflag.service.evaluation;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.parser.DataFormatException;
import ca.uhn.fhir.rest.client.api.IGenericClient;
import ca.uhn.fhir.rest.server.exceptions.ResourceGoneException;
import ca.uhn.fhir.rest.server.exceptions.ResourceNotFoundException;
import java.time.Clock;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Date;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.concurrent.ConcurrentHashMap;
import org.hl7.fhir.instance.model.api.IBaseResource;
import org.hl7.fhir.r4.model.Bundle;
import org.hl7.fhir.r4.model.Observation;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.quality.DataQualityReason;
import org.lungflag.service.audit.QuarantineRepository;
import org.lungflag.service.audit.QuarantineRepository.Refusal;
import org.lungflag.service.audit.QuarantineStage;
import org.lungflag.service.audit.ReceivedResourceRepository;
import org.lungflag.service.intake.InboxItem;
import org.lungflag.service.intake.InboxRepository;
import org.lungflag.service.intake.InboxSignal;
import org.lungflag.service.normalize.CodeMap;
import org.lungflag.service.normalize.FhirSpecimenLookup;
import org.lungflag.service.normalize.NormalizedResource;
import org.lungflag.service.normalize.Normalizer;
import org.lungflag.service.normalize.SpecimenLookup;
import org.lungflag.service.normalize.SpecimenLookup.SpecimenUnavailable;
import org.lungflag.service.patient.PatientDirectory;
import org.lungflag.service.patient.PatientDirectory.PatientUnavailable;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;
import org.springframework.beans.factory.annotation.Value;
import org.springframework.boot.context.event.ApplicationReadyEvent;
import org.springframework.context.SmartLifecycle;
import org.springframework.context.event.EventListener;
import org.springframework.stereotype.Component;
import org.springframework.transaction.support.TransactionTemplate;

/**
 * Drains the inbox on its own thread, never on a delivery thread: parse, normalize (the same path as replay),
 * group by patient, load the patient's facts (and, at first sight, their recent Observations from the FHIR
 * server), then hand each patient's work to the {@link PatientProcessor}. Anything that cannot be done now (the
 * FHIR server is down while a Specimen or Patient must be read) is put back and retried; anything unusable is
 * quarantined. A failure on one patient never stops the others.
 */
@Component
public class InboxProcessor implements SmartLifecycle {

    private static final Logger log = LoggerFactory.getLogger(InboxProcessor.class);

    private final InboxRepository inbox;
    private final InboxSignal signal;
    private final Normalizer normalizer;
    private final PatientDirectory patients;
    private final PatientProcessor processor;
    private final QuarantineRepository quarantine;
    private final ReceivedResourceRepository received;
    private final IGenericClient client;
    private final FhirContext fhir;
    private final CodeMap codes;
    private final EvaluationProperties properties;
    private final TransactionTemplate tx;
    private final Clock clock;
    private final SpecimenLookup specimens;
    private final String owner;
    private final Duration pollInterval;
    private final Set<String> hydrated = ConcurrentHashMap.newKeySet();
    private final Duration retryDelay = Duration.ofSeconds(5);

    private final boolean enabled;
    private volatile boolean running;
    private volatile boolean ready;
    private Thread thread;

    InboxProcessor(
            InboxRepository inbox,
            InboxSignal signal,
            Normalizer normalizer,
            PatientDirectory patients,
            PatientProcessor processor,
            QuarantineRepository quarantine,
            ReceivedResourceRepository received,
            IGenericClient client,
            FhirContext fhir,
            CodeMap codes,
            EvaluationProperties properties,
            TransactionTemplate tx,
            Clock clock,
            @Value("${lungflag.evaluation.poll-interval:500ms}") Duration pollInterval,
            @Value("${lungflag.evaluation.processor-enabled:true}") boolean enabled) {
        this.inbox = inbox;
        this.signal = signal;
        this.normalizer = normalizer;
        this.patients = patients;
        this.processor = processor;
        this.quarantine = quarantine;
        this.received = received;
        this.client = client;
        this.fhir = fhir;
        this.codes = codes;
        this.properties = properties;
        this.tx = tx;
        this.clock = clock;
        this.specimens = new FhirSpecimenLookup(client);
        this.owner =
                "lungflag-" + ProcessHandle.current().pid() + "-" + Integer.toHexString(System.identityHashCode(this));
        this.pollInterval = pollInterval;
        this.enabled = enabled;
    }

    /** Off for an instance that should only serve the console and API (or in tests that drive it by hand). */
    @Override
    public boolean isAutoStartup() {
        return enabled;
    }

    @EventListener(ApplicationReadyEvent.class)
    void onReady() {
        ready = true;
        signal.recorded();
    }

    @Override
    public void start() {
        running = true;
        thread = new Thread(this::loop, "lungflag-inbox");
        thread.setDaemon(true);
        thread.start();
    }

    @Override
    public void stop() {
        running = false;
        if (thread != null) {
            thread.interrupt();
            try {
                thread.join(10_000);
            } catch (InterruptedException e) {
                Thread.currentThread().interrupt();
            }
        }
    }

    @Override
    public boolean isRunning() {
        return running;
    }

    /** Whether the processing thread is alive (false when the processor is disabled on this instance). */
    public boolean processing() {
        Thread t = thread;
        return running && t != null && t.isAlive();
    }

    /** Whether this instance processes the inbox at all. */
    public boolean enabled() {
        return enabled;
    }

    private void loop() {
        while (running) {
            try {
                if (!ready || drainOnce() == 0) {
                    signal.await(pollInterval);
                }
            } catch (InterruptedException e) {
                Thread.currentThread().interrupt();
                return;
            } catch (RuntimeException | Error e) {
                // never let the one processing thread die: an Error from a library (a stack overflow on a
                // pathological resource, an allocation that failed) would stop all intake while the hook still
                // acknowledges; the round's rows stay claimed by this owner and are taken again
                log.error("inbox round failed ({}); retrying", e.getClass().getSimpleName(), e);
                try {
                    Thread.sleep(pollInterval.toMillis());
                } catch (InterruptedException ie) {
                    Thread.currentThread().interrupt();
                    return;
                }
            }
        }
    }

    /** Processes one batch of inbox rows. Returns how many rows were claimed. */
    public int drainOnce() {
        List<InboxItem> items = inbox.claim(owner, properties.batchSize(), Duration.ofMinutes(2));
        if (items.isEmpty()) {
            return 0;
        }
        Instant now = clock.instant();
        Map<String, List<Work>> byPatient = new LinkedHashMap<>();
        List<Long> retry = new ArrayList<>();
        for (InboxItem item : items) {
            try {
                NormalizedResource r = normalize(item, now);
                if (r == null) {
                    continue; // already handled (quarantined without a patient)
                }
                byPatient
                        .computeIfAbsent(r.patientId(), p -> new ArrayList<>())
                        .add(new Work(item.id(), r, item.channel().name(), item.bodySha256(), item.receivedAt()));
            } catch (SpecimenUnavailable e) {
                log.warn("{} could not be normalized now ({}); it will be retried", item.reference(), e.getMessage());
                retry.add(item.id());
            } catch (RuntimeException e) {
                if (transientFailure(e)) {
                    log.warn(
                            "{} could not be normalized now ({}); it will be retried",
                            item.reference(),
                            e.getClass().getSimpleName());
                    retry.add(item.id());
                } else {
                    // something in this resource the mapper did not expect: retrying cannot help, so it is
                    // quarantined rather than left to block the inbox
                    log.error(
                            "{} could not be normalized ({}); quarantined",
                            item.reference(),
                            e.getClass().getSimpleName());
                    log.debug("{}: normalization failed", item.reference(), e);
                    finishWithoutPatient(
                            item,
                            DataQualityReason.MALFORMED_RESOURCE,
                            item.reference() + " could not be normalized ("
                                    + e.getClass().getSimpleName() + "); the service log has the details.",
                            null);
                }
            }
        }
        // demographics and first-sight history are read before the transaction (they may need the FHIR server)
        try {
            patients.prefetch(byPatient.keySet());
        } catch (RuntimeException e) {
            log.debug(
                    "demographics prefetch failed ({}); reading patients one by one",
                    e.getClass().getSimpleName());
        }
        List<PatientProcessor.PatientWork> ready = new ArrayList<>();
        List<String> hydratedNow = new ArrayList<>();
        for (Map.Entry<String, List<Work>> e : byPatient.entrySet()) {
            String patientId = e.getKey();
            try {
                PatientFacts facts = patients.facts(patientId);
                List<Work> work = new ArrayList<>();
                try {
                    work.addAll(hydrate(patientId, now));
                    hydratedNow.add(patientId);
                } catch (HydrationDeferred deferred) {
                    // go on without it; the next batch for this patient tries again
                }
                work.addAll(e.getValue());
                ready.add(new PatientProcessor.PatientWork(patientId, facts, work));
            } catch (PatientUnavailable | RuntimeException ex) {
                notProcessed(patientId, e.getValue(), ex, retry);
            }
        }
        if (!ready.isEmpty()) {
            try {
                processor.applyAll(ready); // one transaction, one commit for the whole batch
                hydrated.addAll(hydratedNow);
            } catch (RuntimeException batchFailed) {
                if (transientFailure(batchFailed)) {
                    // the database (or the FHIR server) is away: patient by patient would only fail as many times
                    log.warn(
                            "a batch of {} patients could not be processed now ({}); it will be retried",
                            ready.size(),
                            batchFailed.getClass().getSimpleName());
                    ready.forEach(pw -> byPatient.get(pw.patientId()).forEach(w -> retry.add(w.inboxId())));
                    inbox.release(retry, retryDelay);
                    return items.size();
                }
                log.debug("batch of {} patients failed; applying them one by one", ready.size(), batchFailed);
                for (PatientProcessor.PatientWork pw : ready) {
                    try {
                        processor.applyAll(List.of(pw));
                        if (hydratedNow.contains(pw.patientId())) {
                            hydrated.add(pw.patientId());
                        }
                    } catch (RuntimeException ex) {
                        notProcessed(pw.patientId(), byPatient.get(pw.patientId()), ex, retry);
                    }
                }
            }
        }
        inbox.release(retry, retryDelay);
        return items.size();
    }

    private static void notProcessed(String patientId, List<Work> work, Exception ex, List<Long> retry) {
        log.warn(
                "Patient/{}: {} resources not processed now ({}); they will be retried",
                patientId,
                work.size(),
                ex.getClass().getSimpleName());
        if (ex instanceof RuntimeException re && !transientFailure(re)) {
            log.error("Patient/{}: unexpected failure while processing", patientId, ex); // a bug: keep its stack
        } else {
            log.debug("Patient/{}: processing failed", patientId, ex);
        }
        work.forEach(w -> retry.add(w.inboxId()));
    }

    /**
     * A failure that may pass by itself: the FHIR server or the database could not be reached or answered an error.
     * Anything else comes from the resource itself.
     */
    static boolean transientFailure(RuntimeException e) {
        return e instanceof ca.uhn.fhir.rest.client.exceptions.FhirClientConnectionException
                || e instanceof ca.uhn.fhir.rest.server.exceptions.BaseServerResponseException
                || e instanceof org.springframework.dao.DataAccessException
                || e instanceof org.springframework.transaction.TransactionException;
    }

    /** Parses and normalizes one inbox row; rows with nothing to apply to a patient are finished here. */
    private NormalizedResource normalize(InboxItem item, Instant now) throws SpecimenUnavailable {
        Observation obs;
        if (item.body() == null) {
            try {
                obs = client.read()
                        .resource(Observation.class)
                        .withId(item.resourceId())
                        .execute();
            } catch (ResourceNotFoundException | ResourceGoneException gone) {
                return new NormalizedResource(
                        SourceRef.observation(item.resourceId(), item.versionId()),
                        patientOfRetracted(item),
                        List.of(),
                        List.of(),
                        true);
            }
        } else {
            IBaseResource parsed;
            try {
                parsed = fhir.newJsonParser().parseResource(item.body());
            } catch (DataFormatException e) {
                finishWithoutPatient(
                        item,
                        DataQualityReason.MALFORMED_RESOURCE,
                        item.reference() + " could not be parsed: " + e.getMessage(),
                        null);
                return null;
            }
            if (!(parsed instanceof Observation o)) {
                finishWithoutPatient(
                        item,
                        DataQualityReason.UNSUPPORTED_RESOURCE_TYPE,
                        item.reference() + " is a " + parsed.fhirType() + ", not an Observation",
                        null);
                return null;
            }
            obs = o;
        }
        NormalizedResource r = normalizer.normalize(obs, now, specimens);
        if (r.retracted() && r.patientId() == null) {
            r = new NormalizedResource(r.source(), patientOfRetracted(item), List.of(), List.of(), true);
        }
        if (r.patientId() == null) {
            NormalizedResource.Refusal first = r.refusals().isEmpty()
                    ? new NormalizedResource.Refusal(
                            null, DataQualityReason.MISSING_SUBJECT, item.reference() + " has no patient")
                    : r.refusals().get(0);
            finishWithoutPatient(item, first.reason(), first.detail(), r.source());
            return null;
        }
        return r;
    }

    /** The patient a retracted resource belonged to, from the stored facts. */
    private String patientOfRetracted(InboxItem item) {
        return received.patientOf("Observation", item.resourceId()).orElse(null);
    }

    private void finishWithoutPatient(InboxItem item, DataQualityReason reason, String detail, SourceRef source) {
        tx.executeWithoutResult(s -> {
            quarantine.add(new Refusal(
                    QuarantineStage.NORMALIZATION,
                    item.resourceType(),
                    item.resourceId(),
                    source != null ? source.version() : item.versionId(),
                    null,
                    reason,
                    detail,
                    null,
                    item.bodySha256(),
                    null));
            received.addAll(List.of(new ReceivedResourceRepository.Received(
                    item.resourceType(),
                    item.resourceId(),
                    source != null ? source.version() : item.versionId(),
                    item.bodySha256(),
                    null,
                    null,
                    item.channel().name(),
                    item.receivedAt(),
                    ReceivedResourceRepository.Outcome.QUARANTINED)));
            inbox.markDone(List.of(item.id()));
        });
    }

    /**
     * At a patient's first sight in this process, their relevant Observations of the timeline window are read from
     * the FHIR server with one search, so a service that starts late or restarts loses nothing. Versions already
     * processed are skipped.
     */
    private List<Work> hydrate(String patientId, Instant now) {
        if (!properties.hydrate() || hydrated.contains(patientId)) {
            return List.of();
        }
        List<Work> work = new ArrayList<>();
        try {
            hydrateInto(patientId, now, work);
        } catch (RuntimeException e) {
            // go on without it; the next batch for this patient tries again, and late data re-evaluates
            log.warn(
                    "Patient/{}: could not load recent Observations from the FHIR server ({}); retrying later",
                    patientId,
                    e.getClass().getSimpleName());
            throw new HydrationDeferred();
        }
        if (!work.isEmpty()) {
            log.info("Patient/{}: hydrated {} Observation versions from the FHIR server", patientId, work.size());
        }
        return work;
    }

    private static final class HydrationDeferred extends RuntimeException {
        HydrationDeferred() {
            super(null, null, false, false);
        }
    }

    private void hydrateInto(String patientId, Instant now, List<Work> work) {
        Bundle page = client.search()
                .forResource(Observation.class)
                .where(Observation.SUBJECT.hasId("Patient/" + patientId))
                .and(Observation.DATE.afterOrEquals().day(Date.from(now.minus(properties.window()))))
                .count(500)
                .cacheControl(new ca.uhn.fhir.rest.api.CacheControlDirective().setNoCache(true))
                .returnBundle(Bundle.class)
                .execute();
        while (page != null) {
            for (Bundle.BundleEntryComponent entry : page.getEntry()) {
                if (!(entry.getResource() instanceof Observation obs)) {
                    continue;
                }
                String id = obs.getIdElement().getIdPart();
                String version = obs.getMeta().getVersionId();
                if (received.seen("Observation", id, version) || !hasMappedCode(obs)) {
                    continue;
                }
                try {
                    NormalizedResource r = normalizer.normalize(obs, now, specimens);
                    if (patientId.equals(r.patientId())) {
                        work.add(new Work(null, r, "HYDRATION", null, now));
                    }
                } catch (SpecimenUnavailable e) {
                    throw new IllegalStateException(e);
                }
            }
            page = page.getLink(Bundle.LINK_NEXT) != null
                    ? client.loadPage().next(page).execute()
                    : null;
        }
    }

    private boolean hasMappedCode(Observation obs) {
        for (var c : obs.getCode().getCoding()) {
            if (codes.lookup(c.getSystem(), c.getCode()).isPresent()) {
                return true;
            }
        }
        for (var comp : obs.getComponent()) {
            for (var c : comp.getCode().getCoding()) {
                if (codes.lookup(c.getSystem(), c.getCode()).isPresent()) {
                    return true;
                }
            }
        }
        return false;
    }
}
