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

    /** One patient's share of an inbox batch. */
    record PatientWork(String patientId, PatientFacts facts, List<Work> work) {}

    /**
     * Everything one transaction does besides the evaluation itself, kept to be written at its end in a few JDBC
     * batches (received references, finished inbox rows, patient states) and the rule modes read once at its start.
     */
    private final class Round {
        final RuleModes.Snapshot modes = PatientProcessor.this.modes.snapshot();
        final List<ReceivedResourceRepository.Received> received = new ArrayList<>();
        final List<Long> done = new ArrayList<>();
        final List<PatientStateStore.Save> saves = new ArrayList<>();
        final Map<String, PatientEvaluator> evaluators = new LinkedHashMap<>();
        final TimelineStore.Writes facts = timelines.writes();
        int evaluations;
        int flagWrites;

        void finish() {
            facts.flush();
            states.saveAll(saves);
            PatientProcessor.this.received.addAll(received);
            inbox.markDone(done);
        }
    }

    /** Applies resources (in clinical order) and marks their inbox rows done, all in one transaction. */
    Result apply(String patientId, PatientFacts patient, List<Work> work) {
        return applyAll(List.of(new PatientWork(patientId, patient, work)));
    }

    /**
     * Applies several patients' resources in one transaction, so a batch of the inbox costs one commit. Each
     * patient's resources are applied in clinical order. If anything fails, nothing of the batch is kept, every
     * evaluator it touched is dropped from the cache, and the exception is thrown (the caller retries patient by
     * patient, so one patient's failure does not hold up the others).
     */
    Result applyAll(List<PatientWork> batch) {
        List<PatientWork> ordered = new ArrayList<>(batch);
        for (int i = 0; i < ordered.size(); i++) {
            PatientWork pw = ordered.get(i);
            ordered.set(i, new PatientWork(pw.patientId(), pw.facts(), inClinicalOrder(pw.work())));
        }
        Round round;
        try {
            round = tx.execute(status -> {
                Round r = new Round();
                applyInTransaction(ordered, null, r);
                r.finish();
                return r;
            });
        } catch (RuntimeException e) {
            ordered.forEach(pw -> cache.evict(pw.patientId()));
            throw e;
        }
        for (PatientStateStore.Save save : round.saves) {
            cache.put(save.patientId(), round.evaluators.get(save.patientId()), save.expectedSeq() + 1);
        }
        for (PatientWork pw : ordered) {
            for (Work w : pw.work()) {
                if (w.inboxId() != null) {
                    metrics.committed(w.receivedAt());
                }
            }
        }
        return new Result(round.evaluations, round.flagWrites);
    }

    /**
     * The order in which one patient's resources are applied: by clinical time (as the engine would have seen them
     * live), except that a withdrawal (deleted, entered in error), which has no clinical time, comes right after the
     * versions of the same resource received before it, so a record created and withdrawn within one batch ends up
     * withdrawn. The sort is stable: equal clinical times keep their order of receipt.
     */
    static List<Work> inClinicalOrder(List<Work> work) {
        List<Work> sorted = new ArrayList<>();
        for (Work w : work) {
            if (!w.resource().retracted()) {
                sorted.add(w);
            }
        }
        sorted.sort(Comparator.comparing(
                (Work w) -> w.resource().clinicalTime(), Comparator.nullsFirst(Comparator.naturalOrder())));
        for (int i = 0; i < work.size(); i++) {
            Work withdrawal = work.get(i);
            if (!withdrawal.resource().retracted()) {
                continue;
            }
            List<Work> earlier = work.subList(0, i);
            int at = 0;
            for (int k = 0; k < sorted.size(); k++) {
                Work candidate = sorted.get(k);
                if (sameResource(candidate, withdrawal) && containsSame(earlier, candidate)) {
                    at = k + 1;
                }
            }
            sorted.add(at, withdrawal);
        }
        return sorted;
    }

    private static boolean sameResource(Work a, Work b) {
        return a.resource().source() != null
                && b.resource().source() != null
                && a.resource()
                        .source()
                        .resourceType()
                        .equals(b.resource().source().resourceType())
                && a.resource().source().id().equals(b.resource().source().id());
    }

    private static boolean containsSame(List<Work> list, Work w) {
        for (Work x : list) {
            if (x == w) {
                return true;
            }
        }
        return false;
    }

    /** Moves a patient's clinical clock on with no new data (resolution and expiry by time passing). */
    Result advance(String patientId, PatientFacts patient, Instant clinicalNow) {
        Round round;
        try {
            round = tx.execute(status -> {
                Round r = new Round();
                applyInTransaction(List.of(new PatientWork(patientId, patient, List.of())), clinicalNow, r);
                r.finish();
                return r;
            });
        } catch (RuntimeException e) {
            cache.evict(patientId);
            throw e;
        }
        cache.put(patientId, round.evaluators.get(patientId), round.saves.get(0).expectedSeq() + 1);
        return new Result(round.evaluations, round.flagWrites);
    }

    private void applyInTransaction(List<PatientWork> batch, Instant advanceTo, Round round) {
        List<String> ids = batch.stream().map(PatientWork::patientId).toList();
        Map<String, PatientStateStore.Locked> locked = states.lockAll(ids);
        // decode the stored state only where the cached evaluator is not the current one; the entry is read once
        // (another thread may evict it meanwhile, e.g. the clock advancer after a failure of its own)
        List<String> stale = new ArrayList<>();
        Map<String, PatientEvaluator> current = new HashMap<>();
        for (String id : ids) {
            EvaluatorCache.Entry cached = cache.get(id);
            PatientStateStore.Locked l = locked.get(id);
            if (cached == null || l == null || cached.seq() != l.seq()) {
                stale.add(id);
            } else {
                current.put(id, cached.evaluator());
            }
        }
        Map<String, PatientStateStore.Stored> stored = states.loadLocked(stale);
        for (PatientWork pw : batch) {
            String patientId = pw.patientId();
            PatientStateStore.Locked l = locked.get(patientId);
            long seq = l == null ? 0L : l.seq();
            PatientEvaluator evaluator = current.containsKey(patientId)
                    ? current.get(patientId)
                    : rebuild(patientId, pw.facts(), stored.get(patientId));
            round.evaluators.put(patientId, evaluator);
            Batch demographics = evaluator.updatePatient(pw.facts());
            reconcile(patientId, demographics, evaluator, round);
            for (Work w : pw.work()) {
                applyOne(patientId, w, evaluator, round);
                if (w.inboxId() != null) {
                    round.done.add(w.inboxId());
                }
            }
            if (advanceTo != null) {
                reconcile(patientId, evaluator.advanceTo(advanceTo), evaluator, round);
            }
            Instant latest = evaluator.timeline().latestTime().orElse(null);
            round.saves.add(new PatientStateStore.Save(patientId, evaluator.resumable(), latest, seq));
        }
    }

    /** An evaluator rebuilt from the store: stale (another instance processed the patient since), evicted, or new. */
    private PatientEvaluator rebuild(String patientId, PatientFacts patient, PatientStateStore.Stored stored) {
        PatientTimeline timeline = timelines.load(patientId, properties.window());
        if (stored == null) {
            return PatientEvaluator.start(engine, timeline, patient);
        }
        if (stored.resumable() != null) {
            return PatientEvaluator.resume(engine, timeline, patient, stored.resumable());
        }
        return PatientEvaluator.resume(engine, timeline, patient, stored.state());
    }

    private void applyOne(String patientId, Work w, PatientEvaluator evaluator, Round round) {
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
            round.facts.retract(r.source().resourceType(), r.source().id());
            reconcile(
                    patientId,
                    evaluator.retract(r.source().resourceType(), r.source().id()),
                    evaluator,
                    round);
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
                round.facts.store(patientId, r.source(), r.facts());
                reconcile(patientId, batch, evaluator, round);
                outcome = batch.added() == AddResult.REPLACED
                        ? Outcome.REPLACED_OLDER
                        : r.refusals().isEmpty() ? Outcome.USED : Outcome.PARTLY_QUARANTINED;
            }
        }
        round.received.add(new ReceivedResourceRepository.Received(
                r.source() == null ? "Observation" : r.source().resourceType(),
                r.source() == null ? null : r.source().id(),
                r.source() == null ? null : r.source().version(),
                w.bodySha256(),
                patientId,
                r.clinicalTime(),
                w.channel(),
                w.receivedAt(),
                outcome));
    }

    /**
     * Records a batch's evaluations and brings the episodes (and so the Flags) in line with them: new, changed
     * and ended episodes get a Flag write; episodes that a re-evaluation no longer produces are withdrawn.
     */
    private void reconcile(String patientId, Batch batch, PatientEvaluator evaluator, Round round) {
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
        List<EvaluationMode> evaluationModes =
                new ArrayList<>(batch.evaluations().size());
        for (RuleEvaluation e : batch.evaluations()) {
            evaluationModes.add(round.modes.mode(e.ruleId()));
        }
        long[] evaluationIds = evaluations.addAll(batch.evaluations(), evaluationModes);
        for (int i = 0; i < evaluationIds.length; i++) {
            RuleEvaluation e = batch.evaluations().get(i);
            ids.put(e, evaluationIds[i]);
            round.evaluations++;
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
                    round);
        }
        // Episodes the evaluator holds active that the store does not (an earlier closure was re-evaluated away)
        for (Episode active : evaluator.activeEpisodes()) {
            if (!latestByEpisode.containsKey(active.key())) {
                EpisodeRow row = episodes.get(active.key()).orElse(null);
                if (row == null || !"ACTIVE".equals(row.status()) || !Objects.equals(row.code(), active.tier())) {
                    reopen(patientId, active, row, round);
                }
            }
        }
        if (batch.supersedesAfter() != null) {
            withdrawVanished(patientId, batch.supersedesAfter(), latestByEpisode.keySet(), evaluator, round);
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
            Round round) {
        EpisodeRow row = episodes.get(episode.key()).orElse(null);
        String status = episode.status().name();
        if (row != null
                && row.status().equals(status)
                && row.code().equals(episode.tier())
                && Objects.equals(row.endedAt(), episode.end())) {
            return; // ongoing at the same tier: the Flag already says this
        }
        RuleDefinition rule = rule(episode.ruleId());
        EvaluationMode mode = round.modes.mode(rule.id());
        Flag flag;
        RuleEvaluation evidence = e;
        if (episode.status() == EpisodeStatus.ACTIVE) {
            // The Flag states the evaluation that met the tier. The batch's latest evaluation of the episode may be
            // one that met none or could not be done (a re-run after late data ends with it while the episode stays
            // open); its explanation has no basis and no inputs, which the advisory-flag profile rightly refuses.
            RuleEvaluation met = e.outcome().isActiveTier() ? e : lastActive;
            if (met != null) {
                flag = AdvisoryResources.activeFlag(episode, met, rule, modeCode(mode), List.of());
                evidence = met;
            } else if (row != null && row.flagResource() != null && row.code().equals(episode.tier())) {
                // nothing in this batch met the tier: the Flag last written for it still says why, made active again
                flag = reactivated(row);
            } else {
                log.warn(
                        "episode {} of Patient/{} is active at {} with no evaluation on record that met it; the Flag"
                                + " is built from the latest evaluation",
                        episode.key(),
                        patientId,
                        episode.tier());
                flag = AdvisoryResources.activeFlag(episode, e, rule, modeCode(mode), List.of());
            }
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
        // The evidence: what this decision was computed from (for an active episode, the evaluation that met its
        // tier); for a closure, the latest readings that no longer met a tier, else the records the advisory cited.
        List<String> inputs = AdvisoryResources.inputsOf(evidence);
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
        round.flagWrites++;
        metrics.advisory(rule.id(), flag.getStatus().toCode());
    }

    private void reopen(String patientId, Episode active, EpisodeRow row, Round round) {
        if (row == null || row.flagResource() == null) {
            return;
        }
        Flag flag = reactivated(row);
        RuleDefinition rule = rule(active.ruleId());
        EvaluationMode mode = round.modes.mode(rule.id());
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
        round.flagWrites++;
    }

    /** The Flag last written for an episode, active again and without an end. */
    private Flag reactivated(EpisodeRow row) {
        Flag flag = parseFlag(row.flagResource());
        flag.setStatus(Flag.FlagStatus.ACTIVE);
        flag.getPeriod().setEndElement(null);
        return flag;
    }

    private void withdrawVanished(
            String patientId, Instant after, Set<String> produced, PatientEvaluator evaluator, Round round) {
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
                round.flagWrites++;
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
