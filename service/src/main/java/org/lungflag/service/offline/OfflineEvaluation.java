package org.lungflag.service.offline;

import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.hl7.fhir.r4.model.Flag;
import org.hl7.fhir.r4.model.Observation;
import org.hl7.fhir.r4.model.Provenance;
import org.hl7.fhir.r4.model.Reference;
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
import org.lungflag.rules.timeline.PatientTimeline;
import org.lungflag.service.normalize.NormalizedResource;
import org.lungflag.service.writeback.AdvisoryResources;
import org.lungflag.service.writeback.DerivedIndexJson;

/**
 * The pipeline without a database or a FHIR server: normalized resources of one patient, in clinical order,
 * through the same {@link PatientEvaluator} and rule engine as the live service, then the same resource builders.
 * The dry run and replay use it, so what they show is what the live service would write (design invariant 2).
 */
public final class OfflineEvaluation {

    private final RuleEngine engine;
    private final RuleCatalog catalog;
    private final Duration window;

    public OfflineEvaluation(RuleEngine engine, RuleCatalog catalog, Duration window) {
        this.engine = engine;
        this.catalog = catalog;
        this.window = window;
    }

    public RuleCatalog catalog() {
        return catalog;
    }

    /**
     * Evaluates one patient.
     *
     * @param resources the patient's normalized resources, in any order (they are applied in clinical order)
     * @param advanceTo clinical time to move on to at the end (resolution and expiry by time passing), or {@code
     *     null} to stop at the last fact
     */
    public PatientRun run(PatientFacts patient, List<NormalizedResource> resources, Instant advanceTo) {
        PatientEvaluator evaluator =
                PatientEvaluator.start(engine, new PatientTimeline(patient.patientId(), window), patient);
        List<RuleEvaluation> evaluations = new ArrayList<>();
        List<NormalizedResource> refused = new ArrayList<>();
        List<NormalizedResource> ordered = new ArrayList<>(resources);
        // clinical order; at equal times, resources without a trigger fact first, so a trigger (an evaluation
        // point) sees the settings charted at its own minute without a re-run (the result is the same either way)
        ordered.sort(
                Comparator.comparing(NormalizedResource::clinicalTime, Comparator.nullsFirst(Comparator.naturalOrder()))
                        .thenComparing(this::hasTrigger));
        for (int i = 0; i < ordered.size(); i++) {
            NormalizedResource r = ordered.get(i);
            if (!r.refusals().isEmpty()) {
                refused.add(r);
            }
            if (r.retracted()) {
                apply(
                        evaluations,
                        evaluator.retract(r.source().resourceType(), r.source().id()));
            } else if (!r.facts().isEmpty()) {
                if (sameTimeFollows(ordered, i) && notYetEvaluated(evaluator, r.clinicalTime())) {
                    // a panel charted at one minute: put it on the timeline and let the last resource of that
                    // minute step the evaluation point, once (offering each would re-run the point per resource)
                    evaluator.timeline().addResource(r.source(), r.facts());
                } else {
                    apply(evaluations, evaluator.offer(r.source(), r.facts()));
                }
            }
        }
        if (advanceTo != null) {
            apply(evaluations, evaluator.advanceTo(advanceTo));
        }
        Map<String, Episode> episodes = new LinkedHashMap<>();
        for (RuleEvaluation e : evaluations) {
            if (e.episode() != null) {
                episodes.put(e.episode().key(), e.episode());
            }
        }
        return new PatientRun(patient.patientId(), evaluations, List.copyOf(episodes.values()), refused);
    }

    private static boolean sameTimeFollows(List<NormalizedResource> ordered, int i) {
        if (i + 1 >= ordered.size()) {
            return false;
        }
        NormalizedResource next = ordered.get(i + 1);
        return !next.retracted()
                && !next.facts().isEmpty()
                && java.util.Objects.equals(next.clinicalTime(), ordered.get(i).clinicalTime());
    }

    private static boolean notYetEvaluated(PatientEvaluator evaluator, Instant t) {
        Instant upTo = evaluator.state().evaluatedUpTo();
        Instant clock = evaluator.state().clock();
        return t != null && (upTo == null || t.isAfter(upTo)) && (clock == null || t.isAfter(clock));
    }

    private boolean hasTrigger(NormalizedResource r) {
        for (var f : r.facts()) {
            if (engine.triggerKinds().contains(f.kind())) {
                return true;
            }
        }
        return false;
    }

    private static void apply(List<RuleEvaluation> evaluations, Batch batch) {
        if (batch.supersedesAfter() != null) {
            Instant after = batch.supersedesAfter();
            evaluations.removeIf(e -> after.equals(Instant.MIN) || e.at().isAfter(after));
        }
        evaluations.addAll(batch.evaluations());
    }

    /** The Flag of each episode in its final state, as the live service would have left it. */
    public List<Flag> flags(PatientRun run, String mode) {
        List<Flag> flags = new ArrayList<>();
        for (Episode episode : run.episodes()) {
            RuleDefinition rule = rule(episode.ruleId());
            RuleEvaluation lastActive = null;
            RuleEvaluation last = null;
            for (RuleEvaluation e : run.evaluations()) {
                if (e.episode() != null && e.episode().key().equals(episode.key())) {
                    last = e;
                    if (e.outcome().isActiveTier()) {
                        lastActive = e;
                    }
                }
            }
            if (lastActive == null) {
                continue;
            }
            Flag active = AdvisoryResources.activeFlag(episode, lastActive, rule, mode, List.of());
            flags.add(
                    episode.status() == EpisodeStatus.ACTIVE
                            ? active
                            : AdvisoryResources.closedFlag(active, episode, last));
        }
        return flags;
    }

    /** A Provenance for a Flag built by {@link #flags}, targeting {@code target} (e.g. the Flag's urn:uuid). */
    public Provenance provenance(Flag flag, String target, Instant recorded) {
        String ruleId = flag.getExtensionByUrl(org.lungflag.fhir.profiles.LungflagFhir.Extensions.ADVISORY_RULE)
                .getExtensionString("id");
        Provenance p = AdvisoryResources.provenance(AdvisoryResources.detailsOf(flag), rule(ruleId), recorded, true);
        p.addTarget(new Reference(target));
        return p;
    }

    /** The derived-index Observations of every evaluation (one per index and anchor time). */
    public List<Observation> indices(PatientRun run, Instant issued) {
        Map<String, Observation> out = new LinkedHashMap<>();
        for (RuleEvaluation e : run.evaluations()) {
            for (UsedIndex index : e.explanation().indices()) {
                out.computeIfAbsent(
                        index.code().code() + "@" + e.at(),
                        k -> AdvisoryResources.derivedIndex(run.patientId(), index, e.at(), issued));
            }
        }
        return List.copyOf(out.values());
    }

    /**
     * The same derived-index Observations as {@link #indices}, in the same order, as JSON lines written by {@link
     * DerivedIndexJson} (the text HAPI's encoder gives for them, without building them).
     */
    public List<String> indicesJson(PatientRun run, Instant issued, DerivedIndexJson json) {
        // keyed like indices() (one per index code and anchor), without writing the anchor out for each
        Map<IndexAt, String> out = new LinkedHashMap<>();
        String issuedText = DerivedIndexJson.instantText(issued);
        for (RuleEvaluation e : run.evaluations()) {
            for (UsedIndex index : e.explanation().indices()) {
                out.computeIfAbsent(
                        new IndexAt(index.code().code(), e.at()),
                        k -> json.encode(run.patientId(), index, e.at(), issued, issuedText));
            }
        }
        return List.copyOf(out.values());
    }

    private record IndexAt(String code, Instant at) {}

    /** A stable urn:uuid for a resource identified by system and value (a Bundle's fullUrl). */
    public static String urn(String system, String value) {
        return "urn:uuid:"
                + java.util.UUID.nameUUIDFromBytes(
                        (system + "|" + value).getBytes(java.nio.charset.StandardCharsets.UTF_8));
    }

    /**
     * Everything a run would write, as Bundle entries with urn:uuid fullUrls (each Flag followed by its
     * Provenance, which targets it), then the derived-index Observations when asked for.
     */
    public List<org.hl7.fhir.r4.model.Bundle.BundleEntryComponent> toWrite(
            PatientRun run, String mode, Instant now, boolean withIndices) {
        List<org.hl7.fhir.r4.model.Bundle.BundleEntryComponent> out = new ArrayList<>();
        for (Flag flag : flags(run, mode)) {
            String urn = urn(
                    flag.getIdentifierFirstRep().getSystem(),
                    flag.getIdentifierFirstRep().getValue());
            out.add(new org.hl7.fhir.r4.model.Bundle.BundleEntryComponent()
                    .setFullUrl(urn)
                    .setResource(flag));
            Provenance p = provenance(flag, urn, now);
            out.add(new org.hl7.fhir.r4.model.Bundle.BundleEntryComponent()
                    .setFullUrl(urn(p.fhirType(), urn))
                    .setResource(p));
        }
        if (withIndices) {
            for (Observation o : indices(run, now)) {
                out.add(new org.hl7.fhir.r4.model.Bundle.BundleEntryComponent()
                        .setFullUrl(urn(
                                o.getIdentifierFirstRep().getSystem(),
                                o.getIdentifierFirstRep().getValue()))
                        .setResource(o));
            }
        }
        return out;
    }

    private RuleDefinition rule(String id) {
        return catalog.rule(id).orElseThrow(() -> new IllegalStateException("rule " + id + " is not in the catalog"));
    }
}
