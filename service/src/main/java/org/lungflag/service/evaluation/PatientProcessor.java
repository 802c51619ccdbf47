package org.lungflag.service.evaluation;

import ca.uhn.fhir.context.FhirContext;
import com.fasterxml.jackson.core.JsonProcessingException;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.time.Clock;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.HashMap;
import java.util.HashSet;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Objects;
import java.util.Set;
import org.hl7.fhir.r4.model.Bundle;
import org.hl7.fhir.r4.model.Flag;
import org.hl7.fhir.r4.model.Observation;
import org.lungflag.fhir.profiles.LungflagFhir;
import org.lungflag.rules.catalog.RuleCatalog;
import org.lungflag.rules.catalog.RuleDefinition;
import org.lungflag.rules.engine.Episode;
import org.lungflag.rules.engine.EpisodeStatus;
import org.lungflag.rules.engine.PatientEvaluator;
import org.lungflag.rules.engine.PatientEvaluator.Batch;
import org.lungflag.rules.engine.RuleEngine;
import org.lungflag.rules.engine.RuleEvaluation;
import org.lungflag.rules.engine.UsedIndex;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.quality.DataQualityReason;
import org.lungflag.rules.timeline.AddResult;
import org.lungflag.rules.timeline.PatientTimeline;
import org.lungflag.service.audit.QuarantineRepository;
import org.lungflag.service.audit.QuarantineRepository.Refusal;
import org.lungflag.service.audit.QuarantineStage;
import org.lungflag.service.audit.ReceivedResourceRepository;
import org.lungflag.service.audit.ReceivedResourceRepository.Outcome;
import org.lungflag.service.evaluation.EpisodeRepository.EpisodeRow;
import org.lungflag.service.intake.InboxRepository;
import org.lungflag.service.metrics.LungflagMetrics;
import org.lungflag.service.normalize.NormalizedResource;
import org.lungflag.service.writeback.AdvisoryResources;
import org.lungflag.service.writeback.OutboxKind;
import org.lungflag.service.writeback.OutboxPayload;
import org.lungflag.service.writeback.OutboxRepository;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;
import org.springframework.stereotype.Component;
import org.springframework.transaction.support.TransactionTemplate;

/**
 * Applies normalized resources to one patient and records every consequence in one database transaction: the
 * received references, normalized values and quarantine entries, the evaluations with their explanations, the
 * episode decisions, and the outbox rows that will write the Flags (design.md data flow). Work on a patient is
 * serialized by the patient lock; the in-memory evaluator is trusted only while its sequence matches the stored
 * one, and is dropped when a transaction fails.
 */
@Component
public class PatientProcessor {

    private static final Logger log = LoggerFactory.getLogger(PatientProcessor.class);

    private final RuleEngine engine;
    private final RuleCatalog catalog;
    private final EvaluationProperties properties;
    private final TimelineStore timelines;
    private final PatientStateStore states;
    private final EvaluationRepository evaluations;
    private final EpisodeRepository episodes;
    private final OutboxRepository outbox;
    private final QuarantineRepository quarantine;
    private final ReceivedResourceRepository received;
    private final InboxRepository inbox;
    private final RuleModes modes;
    private final EvaluatorCache cache;
    private final TransactionTemplate tx;
    private final FhirContext fhir;
    private final ObjectMapper json;
    private final Clock clock;
    private final LungflagMetrics metrics;

    PatientProcessor(
            RuleEngine engine,
            RuleCatalog catalog,
            EvaluationProperties properties,
            TimelineStore timelines,
            PatientStateStore states,
            EvaluationRepository evaluations,
            EpisodeRepository episodes,
            OutboxRepository outbox,
            QuarantineRepository quarantine,
            ReceivedResourceRepository received,
            InboxRepository inbox,
            RuleModes modes,
            EvaluatorCache cache,
            TransactionTemplate tx,
            FhirContext fhir,
            ObjectMapper json,
            Clock clock,
            LungflagMetrics metrics) {
        this.engine = engine;
        this.catalog = catalog;
        this.properties = properties;
        this.timelines = timelines;
        this.states = states;
        this.evaluations = evaluations;
        this.episodes = episodes;
        this.outbox = outbox;
        this.quarantine = quarantine;
        this.received = received;
        this.inbox = inbox;
        this.modes = modes;
        this.cache = cache;
        this.tx = tx;
        this.fhir = fhir;
        this.json = json;
        this.clock = clock;
        this.metrics = metrics;
    }

    /** What one call changed, for metrics and tests. */
    public record Result(int evaluations, int flagWrites) {}

    /** Applies resources (in clinical order) and marks their inbox rows done, all in one transaction. */
    Result apply(String patientId, PatientFacts patient, List<Work> work) {
        List<Work> ordered = new ArrayList<>(work);
        ordered.sort(Comparator.comparing(
                (Work w) -> w.resource().clinicalTime(), Comparator.nullsFirst(Comparator.naturalOrder())));
        try {
            Result result = tx.execute(status -> applyInTransaction(patientId, patient, ordered, null));
            for (Work w : ordered) {
                if (w.inboxId() != null) {
                    metrics.committed(w.receivedAt());
                }
            }
            return result;
        } catch (RuntimeException e) {
            cache.evict(patientId);
            throw e;
        }
    }

    /** Moves a patient's clinical clock on with no new data (resolution and expiry by time passing). */
    Result advance(String patientId, PatientFacts patient, Instant clinicalNow) {
        try {
            return tx.execute(status -> applyInTransaction(patientId, patient, List.of(), clinicalNow));
        } catch (RuntimeException e) {
            cache.evict(patientId);
            throw e;
        }
    }

    private Result applyInTransaction(String patientId, PatientFacts patient, List<Work> work, Instant advanceTo) {
        var stored = states.lockAndLoad(patientId);
        long seq = stored.map(PatientStateStore.Stored::seq).orElse(0L);
        PatientEvaluator evaluator = evaluator(patientId, patient, stored.orElse(null), seq);
        Counts counts = new Counts();
        Batch demographics = evaluator.updatePatient(patient);
        reconcile(patientId, demographics, evaluator, counts);
        List<Long> done = new ArrayList<>();
        for (Work w : work) {
            applyOne(patientId, w, evaluator, counts);
            if (w.inboxId() != null) {
                done.add(w.inboxId());
            }
        }
        if (advanceTo != null) {
            reconcile(patientId, evaluator.advanceTo(advanceTo), evaluator, counts);
        }
        Instant latest = evaluator.timeline().latestTime().orElse(null);
        long next = states.save(patientId, evaluator.resumable(), latest, seq);
        inbox.markDone(done);
        cache.put(patientId, evaluator, next);
        return new Result(counts.evaluations, counts.flagWrites);
    }

    private PatientEvaluator evaluator(
            String patientId, PatientFacts patient, PatientStateStore.Stored stored, long seq) {
        EvaluatorCache.Entry cached = cache.get(patientId);
        if (cached != null && cached.seq() == seq) {
            return cached.evaluator();
        }
        // stale (another instance processed the patient since), evicted, or never seen here: rebuild from the store
        PatientTimeline timeline = timelines.load(patientId, properties.window());
        if (stored == null) {
            return PatientEvaluator.start(engine, timeline, patient);
        }
        if (stored.resumable() != null) {
            return PatientEvaluator.resume(engine, timeline, patient, stored.resumable());
        }
        return PatientEvaluator.resume(engine, timeline, patient, stored.state());
    }

    private void applyOne(String patientId, Work w, PatientEvaluator evaluator, Counts counts) {
        NormalizedResource r = w.resource();
        for (NormalizedResource.Refusal refusal : r.refusals()) {
            quarantine.add(new Refusal(
                    QuarantineStage.NORMALIZATION,
                    r.source() == null ? null : r.source().resourceType(),
                    r.source() == null ? null : r.source().id(),
                    r.source() == null ? null : r.source().version(),
                    patientId,
                    refusal.reason(),
                    refusal.detail(),
                    null,
                    w.bodySha256(),
                    null));
        }
        Outcome outcome;
        if (r.retracted()) {
            timelines.retract(r.source().resourceType(), r.source().id());
            reconcile(
                    patientId,
                    evaluator.retract(r.source().resourceType(), r.source().id()),
                    evaluator,
                    counts);
            outcome = Outcome.RETRACTED;
        } else if (r.facts().isEmpty()) {
            outcome = Outcome.QUARANTINED;
        } else {
            Batch batch = evaluator.offer(r.source(), r.facts());
            if (batch.added() == AddResult.DUPLICATE) {
                outcome = Outcome.DUPLICATE;
            } else if (batch.added() == AddResult.OUTSIDE_WINDOW) {
                outcome = Outcome.OUTSIDE_WINDOW;
                quarantine.add(new Refusal(
                        QuarantineStage.NORMALIZATION,
                        r.source().resourceType(),
                        r.source().id(),
                        r.source().version(),
                        patientId,
                        DataQualityReason.OUTSIDE_WINDOW,
                        r.source().unversioned() + " has clinical time " + r.clinicalTime() + ", before the patient's "
                                + properties.window().toHours() + " h timeline window.",
                        null,
                        w.bodySha256(),
                        null));
            } else {
                timelines.store(patientId, r.source(), r.facts());
                reconcile(patientId, batch, evaluator, counts);
                outcome = batch.added() == AddResult.REPLACED
                        ? Outcome.REPLACED_OLDER
                        : r.refusals().isEmpty() ? Outcome.USED : Outcome.PARTLY_QUARANTINED;
            }
        }
        received.add(
                r.source() == null ? "Observation" : r.source().resourceType(),
                r.source() == null ? null : r.source().id(),
                r.source() == null ? null : r.source().version(),
                w.bodySha256(),
                patientId,
                r.clinicalTime(),
                w.channel(),
                w.receivedAt(),
                outcome);
    }

    private static final class Counts {
        int evaluations;
        int flagWrites;
    }

    /**
     * Records a batch's evaluations and brings the episodes (and so the Flags) in line with them: new, changed
     * and ended episodes get a Flag write; episodes that a re-evaluation no longer produces are withdrawn.
     */
    private void reconcile(String patientId, Batch batch, PatientEvaluator evaluator, Counts counts) {
        if (batch.supersedesAfter() == null && batch.evaluations().isEmpty()) {
            return;
        }
        if (batch.supersedesAfter() != null) {
            evaluations.supersedeAfter(patientId, batch.supersedesAfter());
        }
        Map<String, RuleEvaluation> latestByEpisode = new LinkedHashMap<>();
        Map<String, RuleEvaluation> lastActiveByEpisode = new HashMap<>();
        Map<String, List<String>> lastInputsByRule = new HashMap<>();
        Map<RuleEvaluation, Long> ids = new HashMap<>();
        Map<String, UsedIndexAt> indices = new LinkedHashMap<>();
        for (RuleEvaluation e : batch.evaluations()) {
            EvaluationMode mode = modes.mode(e.ruleId());
            ids.put(e, evaluations.add(e, mode));
            counts.evaluations++;
            metrics.evaluated(e.ruleId(), e.outcome().name());
            List<String> inputs = AdvisoryResources.inputsOf(e);
            if (!inputs.isEmpty()) {
                lastInputsByRule.put(e.ruleId(), inputs);
            }
            if (e.episode() != null) {
                latestByEpisode.put(e.episode().key(), e);
                if (e.outcome().isActiveTier()) {
                    lastActiveByEpisode.put(e.episode().key(), e);
                }
            }
            for (UsedIndex index : e.explanation().indices()) {
                indices.putIfAbsent(index.code().code() + "@" + e.at(), new UsedIndexAt(index, e.at()));
            }
        }
        for (Map.Entry<String, RuleEvaluation> entry : latestByEpisode.entrySet()) {
            RuleEvaluation e = entry.getValue();
            writeIfChanged(
                    patientId,
                    e.episode(),
                    e,
                    lastActiveByEpisode.get(entry.getKey()),
                    lastInputsByRule.getOrDefault(e.ruleId(), List.of()),
                    ids.get(e),
                    counts);
        }
        // Episodes the evaluator holds active that the store does not (an earlier closure was re-evaluated away)
        for (Episode active : evaluator.activeEpisodes()) {
            if (!latestByEpisode.containsKey(active.key())) {
                EpisodeRow row = episodes.get(active.key()).orElse(null);
                if (row == null || !"ACTIVE".equals(row.status()) || !Objects.equals(row.code(), active.tier())) {
                    reopen(patientId, active, row, counts);
                }
            }
        }
        if (batch.supersedesAfter() != null) {
            withdrawVanished(patientId, batch.supersedesAfter(), latestByEpisode.keySet(), evaluator, counts);
        }
        if (modes.indicesWritten() && !indices.isEmpty()) {
            queueIndices(patientId, indices.values());
        }
    }

    private record UsedIndexAt(UsedIndex index, Instant at) {}

    private void writeIfChanged(
            String patientId,
            Episode episode,
            RuleEvaluation e,
            RuleEvaluation lastActive,
            List<String> recentInputs,
            Long evaluationId,
            Counts counts) {
        EpisodeRow row = episodes.get(episode.key()).orElse(null);
        String status = episode.status().name();
        if (row != null
                && row.status().equals(status)
                && row.code().equals(episode.tier())
                && Objects.equals(row.endedAt(), episode.end())) {
            return; // ongoing at the same tier: the Flag already says this
        }
        RuleDefinition rule = rule(episode.ruleId());
        EvaluationMode mode = modes.mode(rule.id());
        Flag flag;
        if (episode.status() == EpisodeStatus.ACTIVE) {
            flag = AdvisoryResources.activeFlag(episode, e, rule, modeCode(mode), List.of());
        } else {
            Flag lastFlag = lastActive != null
                    ? AdvisoryResources.activeFlag(episode, lastActive, rule, modeCode(mode), List.of())
                    : row != null && row.flagResource() != null ? parseFlag(row.flagResource()) : null;
            if (lastFlag == null) {
                log.warn("episode {} ended with no active Flag on record; nothing to close", episode.key());
                return;
            }
            flag = AdvisoryResources.closedFlag(lastFlag, episode, e);
        }
        // The evidence: what this decision was computed from; for a closure, the latest readings that no longer met
        // a tier, else the records the advisory cited.
        List<String> inputs = AdvisoryResources.inputsOf(e);
        if (inputs.isEmpty()) {
            inputs = recentInputs.isEmpty() ? AdvisoryResources.detailsOf(flag) : recentInputs;
        }
        queueFlag(patientId, episode, rule, flag, inputs, row == null, evaluationId, mode);
        episodes.upsert(
                episode.key(),
                patientId,
                episode.ruleId(),
                episode.ruleVersion(),
                episode.tier(),
                status,
                episode.start(),
                episode.end(),
                episode.status() == EpisodeStatus.ACTIVE ? null : status,
                mode,
                encode(flag));
        counts.flagWrites++;
        metrics.advisory(rule.id(), flag.getStatus().toCode());
    }

    private void reopen(String patientId, Episode active, EpisodeRow row, Counts counts) {
        if (row == null || row.flagResource() == null) {
            return;
        }
        Flag flag = parseFlag(row.flagResource());
        flag.setStatus(Flag.FlagStatus.ACTIVE);
        flag.getPeriod().setEndElement(null);
        RuleDefinition rule = rule(active.ruleId());
        EvaluationMode mode = modes.mode(rule.id());
        queueFlag(patientId, active, rule, flag, AdvisoryResources.detailsOf(flag), false, null, mode);
        episodes.upsert(
                active.key(),
                patientId,
                active.ruleId(),
                active.ruleVersion(),
                active.tier(),
                "ACTIVE",
                active.start(),
                null,
                null,
                mode,
                encode(flag));
        counts.flagWrites++;
    }

    private void withdrawVanished(
            String patientId, Instant after, Set<String> produced, PatientEvaluator evaluator, Counts counts) {
        Set<String> alive = new HashSet<>(produced);
        evaluator.activeEpisodes().forEach(ep -> alive.add(ep.key()));
        for (EpisodeRow row : episodes.forPatient(patientId)) {
            boolean inRerun = after.equals(Instant.MIN) || row.startedAt().isAfter(after);
            if (!inRerun || alive.contains(row.key()) || "ENTERED_IN_ERROR".equals(row.status())) {
                continue;
            }
            if (row.flagResource() != null) {
                Flag flag = AdvisoryResources.withdrawnFlag(parseFlag(row.flagResource()));
                EvaluationMode mode = EvaluationMode.valueOf(row.mode());
                enqueue(patientId, row.key(), flag, null, null, mode);
                episodes.upsert(
                        row.key(),
                        patientId,
                        row.ruleId(),
                        row.ruleVersion(),
                        row.code(),
                        "ENTERED_IN_ERROR",
                        row.startedAt(),
                        row.endedAt(),
                        "WITHDRAWN",
                        mode,
                        encode(flag));
                counts.flagWrites++;
                log.info(
                        "withdrew advisory episode {} of Patient/{}: re-evaluation no longer produces it",
                        row.key(),
                        patientId);
            }
        }
    }

    private void queueFlag(
            String patientId,
            Episode episode,
            RuleDefinition rule,
            Flag flag,
            List<String> inputs,
            boolean created,
            Long evaluationId,
            EvaluationMode mode) {
        String provenance = fhir.newJsonParser()
                .encodeResourceToString(AdvisoryResources.provenance(inputs, rule, clock.instant(), created));
        enqueue(patientId, episode.key(), flag, provenance, evaluationId, mode);
    }

    private void enqueue(
            String patientId, String episodeKey, Flag flag, String provenance, Long evaluationId, EvaluationMode mode) {
        Bundle transaction = new Bundle().setType(Bundle.BundleType.TRANSACTION);
        transaction.addEntry(
                AdvisoryResources.conditionalUpdate(flag, LungflagFhir.Identifiers.ADVISORY_EPISODE, episodeKey));
        String payload =
                payload(new OutboxPayload(fhir.newJsonParser().encodeResourceToString(transaction), provenance));
        outbox.add(OutboxKind.FLAG, episodeKey, patientId, evaluationId, payload, mode == EvaluationMode.SILENT);
    }

    private void queueIndices(String patientId, Iterable<UsedIndexAt> indices) {
        Bundle transaction = new Bundle().setType(Bundle.BundleType.TRANSACTION);
        Instant now = clock.instant();
        for (UsedIndexAt u : indices) {
            Observation o = AdvisoryResources.derivedIndex(patientId, u.index(), u.at(), now);
            transaction.addEntry(AdvisoryResources.conditionalUpdate(
                    o,
                    LungflagFhir.Identifiers.DERIVED_INDEX,
                    AdvisoryResources.derivedIndexKey(patientId, u.index(), u.at())));
        }
        String payload = payload(new OutboxPayload(fhir.newJsonParser().encodeResourceToString(transaction), null));
        outbox.add(OutboxKind.INDICES, null, patientId, null, payload, false);
    }

    private RuleDefinition rule(String ruleId) {
        return catalog.rule(ruleId)
                .orElseThrow(() -> new IllegalStateException("rule " + ruleId + " is not in the catalog"));
    }

    private static String modeCode(EvaluationMode mode) {
        return mode == EvaluationMode.SILENT ? "silent" : "live";
    }

    private Flag parseFlag(String flagJson) {
        return fhir.newJsonParser().parseResource(Flag.class, flagJson);
    }

    private String encode(Flag flag) {
        return fhir.newJsonParser().encodeResourceToString(flag);
    }

    private String payload(OutboxPayload payload) {
        try {
            return json.writeValueAsString(payload);
        } catch (JsonProcessingException e) {
            throw new IllegalStateException("cannot encode an outbox payload", e);
        }
    }
}
