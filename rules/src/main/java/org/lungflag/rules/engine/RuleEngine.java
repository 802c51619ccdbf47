package org.lungflag.rules.engine;

import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.EnumSet;
import java.util.List;
import java.util.Objects;
import java.util.Optional;
import java.util.Set;
import org.lungflag.rules.catalog.ParameterOverrides;
import org.lungflag.rules.catalog.Population;
import org.lungflag.rules.catalog.RuleCatalog;
import org.lungflag.rules.catalog.RuleDefinition;
import org.lungflag.rules.catalog.RuleLogic;
import org.lungflag.rules.catalog.RuleVariables;
import org.lungflag.rules.catalog.Tier;
import org.lungflag.rules.index.IndexCode;
import org.lungflag.rules.index.IndexResult;
import org.lungflag.rules.index.IndexValue;
import org.lungflag.rules.index.NotEvaluable;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.pairing.PairedInputs;
import org.lungflag.rules.pairing.Pairing;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.quality.DataQualityReason;
import org.lungflag.rules.timeline.PatientTimeline;

/**
 * Evaluates the catalog for one patient at one clinical time: a pure step function over an immutable {@link
 * EngineState}. Given the same state, timeline, patient and time, it returns the same result; it never reads a
 * clock and never looks at facts after the anchor. Thread-safe (it holds only immutable, precompiled rules).
 *
 * <p>At an evaluation point (the clinical time of a trigger fact) it first closes episodes whose resolve or expiry
 * deadline passed before the point, then pairs the values in force, computes the indices once, evaluates each
 * triggered rule that applies to the patient, and closes episodes whose deadline falls at the point. {@link
 * #advance} moves clinical time on with no new data (resolution and expiry by time passing).
 */
public final class RuleEngine {

    private static final java.util.Comparator<RuleEvaluation> EVALUATION_ORDER =
            java.util.Comparator.comparing(RuleEvaluation::at).thenComparing(RuleEvaluation::ruleId);

    private final RuleCatalog catalog;
    private final List<CompiledRule> rules;
    private final IndexProvider indexProvider;
    private final EngineSettings settings;
    private final Pairing pairing;
    private final Set<QuantityKind> triggerKinds;
    private final Texts texts;

    public RuleEngine(
            RuleCatalog catalog, ParameterOverrides overrides, IndexProvider indexProvider, EngineSettings settings) {
        this.catalog = Objects.requireNonNull(catalog, "catalog");
        this.indexProvider = Objects.requireNonNull(indexProvider, "indexProvider");
        this.settings = Objects.requireNonNull(settings, "settings");
        this.pairing = new Pairing(settings.pairing());
        List<CompiledRule> compiled = new ArrayList<>();
        Set<QuantityKind> kinds = EnumSet.noneOf(QuantityKind.class);
        for (RuleDefinition r : catalog.rules()) {
            compiled.add(new CompiledRule(r, overrides));
            kinds.addAll(r.triggers());
        }
        this.rules = List.copyOf(compiled);
        this.triggerKinds = kinds;
        this.texts = new Texts(settings.displayZone());
    }

    /** The engine with the real index calculator, default site parameters and default settings. */
    public static RuleEngine create(RuleCatalog catalog, ParameterOverrides overrides) {
        return new RuleEngine(
                catalog,
                overrides,
                new CalculatorIndexProvider(org.lungflag.rules.index.SiteParameters.defaults()),
                EngineSettings.defaults());
    }

    /** The engine with the real index calculator for a site's parameters and the given settings. */
    public static RuleEngine create(
            RuleCatalog catalog,
            ParameterOverrides overrides,
            org.lungflag.rules.index.SiteParameters site,
            EngineSettings settings) {
        return new RuleEngine(catalog, overrides, new CalculatorIndexProvider(site), settings);
    }

    public RuleCatalog catalog() {
        return catalog;
    }

    public EngineSettings settings() {
        return settings;
    }

    /** Every fact kind that triggers at least one rule. */
    public Set<QuantityKind> triggerKinds() {
        return triggerKinds;
    }

    /**
     * Evaluates at one evaluation point. {@code at} must be later than {@code prior.evaluatedUpTo()}; the rules
     * evaluated are those with a trigger fact at exactly {@code at} on the timeline.
     */
    public StepResult step(EngineState prior, PatientTimeline timeline, PatientFacts patient, Instant at) {
        Objects.requireNonNull(at, "at");
        EngineState state = prior == null ? EngineState.initial(timeline.patientId()) : prior;
        if (state.evaluatedUpTo() != null && !at.isAfter(state.evaluatedUpTo())) {
            throw new IllegalArgumentException("evaluation points must move forward in clinical time: " + at
                    + " is not after " + state.evaluatedUpTo() + " (re-run from a checkpoint instead)");
        }
        Set<QuantityKind> present = EnumSet.noneOf(QuantityKind.class);
        for (QuantityKind k : triggerKinds) {
            if (timeline.hasFactAt(k, at)) {
                present.add(k);
            }
        }
        List<RuleEvaluation> out = new ArrayList<>();
        RuleState[] states = states(state);
        Scope.Anchor anchor = null;
        for (int i = 0; i < rules.size(); i++) {
            CompiledRule rule = rules.get(i);
            String id = rule.definition.id();
            RuleState rs = states[i];
            boolean triggered = triggered(rule.definition, present);
            // deadlines up to this point are settled here, so every evaluation this step emits lies after the
            // previous point and at or before this one (what a re-run from a checkpoint relies on); a deadline
            // falling exactly at a point where the rule is evaluated waits for that evaluation (ties go to data)
            rs = closeDue(rule, rs, state.patientId(), at, !triggered, out);
            if (!triggered) {
                states[i] = rs;
                continue;
            }
            if (anchor == null) {
                PairedInputs paired = pairing.at(timeline, at);
                IndexProvider.Indices indices = indexProvider.compute(paired, patient);
                anchor = new Scope.Anchor(
                        at,
                        timeline,
                        paired,
                        indices,
                        patient.ageInYearsAt(at).orElse(null),
                        patient.sex().name(),
                        settings.pairing().measurementLookBack());
            }
            Evaluated ev = evaluate(rule, rs, anchor, state.patientId());
            if (ev != null) {
                rs = ev.state;
                out.add(ev.evaluation);
            }
            rs = closeDue(rule, rs, state.patientId(), at, true, out);
            states[i] = rs;
        }
        Instant clock = state.clock() == null || state.clock().isBefore(at) ? at : state.clock();
        return new StepResult(new EngineState(state.patientId(), at, clock, List.of(states)), sortedEvaluations(out));
    }

    /**
     * Moves clinical time on to {@code to} with no new data: episodes whose resolve or expiry deadline is at or
     * before {@code to} end, stamped with their deadline (not with {@code to}).
     */
    public StepResult advance(EngineState prior, Instant to) {
        Objects.requireNonNull(prior, "prior");
        if (prior.clock() != null && !to.isAfter(prior.clock())) {
            return new StepResult(prior, List.of());
        }
        RuleState[] states = states(prior);
        List<RuleEvaluation> out = new ArrayList<>();
        for (int i = 0; i < rules.size(); i++) {
            states[i] = closeDue(rules.get(i), states[i], prior.patientId(), to, true, out);
        }
        return new StepResult(
                new EngineState(prior.patientId(), prior.evaluatedUpTo(), to, List.of(states)), sortedEvaluations(out));
    }

    private static boolean triggered(RuleDefinition rule, Set<QuantityKind> present) {
        for (QuantityKind k : rule.triggers()) {
            if (present.contains(k)) {
                return true;
            }
        }
        return false;
    }

    /** One state per catalog rule, in the catalog's (id) order; a persisted state's rules are matched by id. */
    private RuleState[] states(EngineState state) {
        RuleState[] out = new RuleState[rules.size()];
        List<RuleState> given = state.rules();
        boolean aligned = given.size() == out.length;
        for (int i = 0; aligned && i < out.length; i++) {
            aligned = given.get(i).ruleId().equals(rules.get(i).definition.id());
        }
        if (aligned) {
            return given.toArray(out);
        }
        for (int i = 0; i < out.length; i++) {
            String id = rules.get(i).definition.id();
            out[i] = state.rule(id).orElseGet(() -> RuleState.initial(id));
        }
        return out;
    }

    private static List<RuleEvaluation> sortedEvaluations(List<RuleEvaluation> out) {
        if (out.size() > 1) {
            out.sort(EVALUATION_ORDER);
        }
        return out;
    }

    // --- one rule at one anchor ---------------------------------------------------------------------------

    private record Evaluated(RuleState state, RuleEvaluation evaluation) {}

    private Evaluated evaluate(CompiledRule rule, RuleState st, Scope.Anchor anchor, String patientId) {
        RuleDefinition def = rule.definition;
        Population population = def.population();
        if (population != Population.ANY) {
            if (anchor.ageYears == null) {
                return notEvaluable(
                        rule,
                        st,
                        anchor,
                        patientId,
                        DataQualityReason.MISSING_BIRTH_DATE,
                        "the birth date is unknown, so this " + population.yamlName()
                                + " rule cannot be chosen or excluded");
            }
            boolean adult = anchor.ageYears >= Population.ADULT_AGE_YEARS;
            if ((population == Population.ADULT) != adult) {
                return null; // not for this age group: not evaluated at all
            }
        }
        if (!def.support().isEmpty()) {
            if (anchor.support == null) {
                return notEvaluable(
                        rule,
                        st,
                        anchor,
                        patientId,
                        DataQualityReason.MISSING_SUPPORT,
                        "the respiratory support at the anchor time is not recorded");
            }
            if (!def.support().contains(anchor.support.mode())) {
                return notEvaluable(
                        rule,
                        st,
                        anchor,
                        patientId,
                        DataQualityReason.SUPPORT_NOT_QUALIFYING,
                        "support in force is " + Texts.support(anchor.support.mode()) + "; this rule applies to "
                                + rule.supportText);
            }
        }
        Scope scope = new Scope(anchor, rule, st);
        long decision;
        try {
            decision = ((Number) def.logic().decision().eval(scope)).longValue();
        } catch (dev.cel.runtime.CelEvaluationException e) {
            throw new IllegalStateException("rule " + def.id() + " failed to evaluate: " + e.getMessage(), e);
        }
        if (decision < 0) {
            RuleLogic.NotEvaluableCase c = def.logic().notEvaluable().get((int) (-decision - 1));
            String detail = texts.render(c.detail(), scope, null, null, null);
            return notEvaluableWithScope(
                    rule,
                    st,
                    scope,
                    patientId,
                    c.reason(),
                    detail == null ? c.reason().definition() : detail);
        }
        for (String required : def.logic().requires()) {
            RuleVariables.Variable v = RuleVariables.standard().get(required);
            if (!Boolean.TRUE.equals(scope.value(v.availability().orElseThrow()))) {
                Missing m = missing(v, anchor);
                return notEvaluableWithScope(rule, st, scope, patientId, m.reason, m.detail);
            }
        }
        int rank = (int) decision - 1;
        return temporal(rule, st, scope, patientId, rank);
    }

    private record Missing(DataQualityReason reason, String detail) {}

    private Missing missing(RuleVariables.Variable v, Scope.Anchor anchor) {
        if (v.index() != null) {
            IndexResult r = anchor.index(v.index()).orElse(null);
            if (r instanceof NotEvaluable ne) {
                return new Missing(ne.reason(), ne.detail());
            }
            return new Missing(
                    DataQualityReason.OUT_OF_FORMULA_RANGE, v.index().display() + " was not computed at this anchor");
        }
        QuantityKind kind = v.kind();
        Duration lookBack = kind.staysInForce()
                ? null
                : RuleVariables.arterialOnly(kind)
                        ? settings.pairing().measurementLookBack()
                        : settings.pairing().settingLookBack();
        String detail = lookBack == null
                ? kind.label() + " not on record"
                : kind.label() + (RuleVariables.arterialOnly(kind) ? " (arterial)" : "") + " not charted within "
                        + lookBack.toMinutes() + " min before the anchor";
        return new Missing(reasonFor(kind), detail);
    }

    static DataQualityReason reasonFor(QuantityKind kind) {
        return switch (kind) {
            case PAO2 -> DataQualityReason.MISSING_PAO2;
            case PACO2 -> DataQualityReason.MISSING_PACO2;
            case SPO2 -> DataQualityReason.MISSING_SPO2;
            case SAO2 -> DataQualityReason.MISSING_SAO2;
            case FIO2 -> DataQualityReason.MISSING_FIO2;
            case PEEP -> DataQualityReason.MISSING_PEEP;
            case PLATEAU_PRESSURE -> DataQualityReason.MISSING_PLATEAU_PRESSURE;
            case PEAK_PRESSURE -> DataQualityReason.MISSING_PEAK_PRESSURE;
            case MEAN_AIRWAY_PRESSURE -> DataQualityReason.MISSING_MEAN_AIRWAY_PRESSURE;
            case TIDAL_VOLUME, TIDAL_VOLUME_EXPIRED -> DataQualityReason.MISSING_TIDAL_VOLUME;
            case RESPIRATORY_RATE -> DataQualityReason.MISSING_RESPIRATORY_RATE;
            case MINUTE_VENTILATION -> DataQualityReason.MISSING_MINUTE_VENTILATION;
            case ETCO2 -> DataQualityReason.MISSING_ETCO2;
            case MIXED_EXPIRED_PCO2 -> DataQualityReason.MISSING_MIXED_EXPIRED_PCO2;
            case HEMOGLOBIN -> DataQualityReason.MISSING_HEMOGLOBIN;
            case BODY_HEIGHT -> DataQualityReason.MISSING_HEIGHT;
            default -> DataQualityReason.NO_VENTILATOR_SETTINGS;
        };
    }

    private Evaluated notEvaluable(
            CompiledRule rule,
            RuleState st,
            Scope.Anchor anchor,
            String patientId,
            DataQualityReason reason,
            String detail) {
        return notEvaluableWithScope(rule, st, new Scope(anchor, rule, st), patientId, reason, detail);
    }

    private Evaluated notEvaluableWithScope(
            CompiledRule rule, RuleState st, Scope scope, String patientId, DataQualityReason reason, String detail) {
        RuleState next = withHistory(rule, st, scope);
        Explanation ex = texts.explain(rule, scope, null, next.episode(), false);
        return new Evaluated(
                next,
                evaluation(
                        rule,
                        patientId,
                        scope.anchor().at,
                        Outcome.NOT_EVALUABLE,
                        null,
                        reason,
                        detail,
                        next.episode(),
                        ex));
    }

    /** Applies the temporal semantics to a decided tier ({@code rank} -1 for none). */
    private Evaluated temporal(CompiledRule rule, RuleState st, Scope scope, String patientId, int rank) {
        Instant at = scope.anchor().at;
        RuleDefinition def = rule.definition;
        Episode episode = st.episode();
        if (rank < 0) {
            Instant notMetSince = episode != null && st.notMetSince() == null ? at : st.notMetSince();
            RuleState next =
                    new RuleState(def.id(), episode, st.lastMetAt(), at, notMetSince, null, 0, null, st.history());
            next = withHistory(rule, next, scope);
            if (episode != null) {
                Instant deadline = later(st.lastMetAt().plus(rule.resolveAfter), notMetSince);
                if (!deadline.isAfter(at)) {
                    Episode closed = episode.closed(EpisodeStatus.RESOLVED, at);
                    RuleState done =
                            new RuleState(def.id(), null, st.lastMetAt(), at, null, null, 0, null, next.history());
                    Explanation ex = texts.explain(rule, scope, null, closed, false);
                    return new Evaluated(
                            done,
                            evaluation(
                                    rule,
                                    patientId,
                                    at,
                                    Outcome.RESOLVED,
                                    closed.tier(),
                                    null,
                                    "no tier met since " + texts.time(st.lastMetAt()) + " (resolves after "
                                            + CompiledRule.formatDuration(rule.resolveAfter) + " with no tier met)",
                                    closed,
                                    ex));
                }
            }
            Explanation ex = texts.explain(rule, scope, null, episode, false);
            String detail = episode == null
                    ? ""
                    : "the active episode resolves at "
                            + texts.time(later(st.lastMetAt().plus(rule.resolveAfter), notMetSince))
                            + " if no tier is met until then";
            return new Evaluated(
                    next, evaluation(rule, patientId, at, Outcome.NOT_MET, null, null, detail, episode, ex));
        }

        Tier tier = def.tiers().get(rank);
        // the run of evaluations with a tier met (for onset qualifiers); a long gap without data restarts it
        Instant runStart = st.runStart();
        int runCount = st.runCount();
        Instant runLastCounted = st.runLastCounted();
        boolean stale = st.lastEvaluableAt() != null
                && Duration.between(st.lastEvaluableAt(), at).compareTo(rule.expireAfter) > 0;
        if (runStart == null || stale) {
            runStart = at;
            runCount = 1;
            runLastCounted = at;
        } else if (Duration.between(runLastCounted, at).compareTo(rule.consecutiveSpacing) >= 0) {
            runCount++;
            runLastCounted = at;
        }
        Outcome outcome;
        String detail = "";
        Episode next;
        if (episode != null) {
            int current = def.tier(episode.tier()).map(Tier::rank).orElse(-1);
            if (rank == current) {
                outcome = Outcome.ONGOING;
                next = episode;
            } else {
                outcome = rank > current ? Outcome.ESCALATED : Outcome.DE_ESCALATED;
                next = episode.withTier(at, tier.code());
            }
        } else {
            boolean qualified = true;
            if (rule.sustained != null && Duration.between(runStart, at).compareTo(rule.sustained) < 0) {
                qualified = false;
                detail = tier.display() + ": criteria met at this evaluation and since " + texts.time(runStart)
                        + "; an advisory needs them sustained for " + CompiledRule.formatDuration(rule.sustained);
            }
            if (rule.consecutiveCount > 0 && runCount < rule.consecutiveCount) {
                qualified = false;
                detail = tier.display() + ": criteria met at " + runCount + " of " + rule.consecutiveCount
                        + " consecutive readings at least " + CompiledRule.formatDuration(rule.consecutiveSpacing)
                        + " apart";
            }
            if (qualified) {
                outcome = Outcome.ONSET;
                next = Episode.begin(patientId, def.id(), def.version(), def.digest(), at, tier.code());
            } else {
                outcome = Outcome.NOT_MET;
                next = null;
            }
        }
        RuleState ns = new RuleState(def.id(), next, at, at, null, runStart, runCount, runLastCounted, st.history());
        ns = withHistory(rule, ns, scope);
        boolean active = outcome.isActiveTier();
        Explanation ex = texts.explain(rule, scope, active ? tier : null, next, active);
        return new Evaluated(
                ns, evaluation(rule, patientId, at, outcome, active ? tier.code() : null, null, detail, next, ex));
    }

    /** Closes the episode if a deadline passed: before {@code limit}, or at it too when {@code inclusive}. */
    private RuleState closeDue(
            CompiledRule rule,
            RuleState st,
            String patientId,
            Instant limit,
            boolean inclusive,
            List<RuleEvaluation> out) {
        Episode episode = st.episode();
        if (episode == null) {
            return st;
        }
        Instant resolveAt =
                st.notMetSince() == null ? null : later(st.lastMetAt().plus(rule.resolveAfter), st.notMetSince());
        Instant expireAt = st.lastEvaluableAt().plus(rule.expireAfter);
        Instant deadline = resolveAt != null && !resolveAt.isAfter(expireAt) ? resolveAt : expireAt;
        boolean due = inclusive ? !deadline.isAfter(limit) : deadline.isBefore(limit);
        if (!due) {
            return st;
        }
        boolean resolved = deadline.equals(resolveAt);
        EpisodeStatus status = resolved ? EpisodeStatus.RESOLVED : EpisodeStatus.EXPIRED;
        Episode closed = episode.closed(status, deadline);
        String detail = resolved
                ? "no tier met since " + texts.time(st.lastMetAt()) + " (resolves after "
                        + CompiledRule.formatDuration(rule.resolveAfter) + " with no tier met)"
                : "no evaluable data since " + texts.time(st.lastEvaluableAt()) + " (expires after "
                        + CompiledRule.formatDuration(rule.expireAfter) + " without new data)";
        out.add(evaluation(
                rule,
                patientId,
                deadline,
                resolved ? Outcome.RESOLVED : Outcome.EXPIRED,
                closed.tier(),
                null,
                detail,
                closed,
                texts.transition(rule, detail)));
        return new RuleState(
                st.ruleId(),
                null,
                st.lastMetAt(),
                st.lastEvaluableAt(),
                null,
                resolved ? st.runStart() : null,
                resolved ? st.runCount() : 0,
                resolved ? st.runLastCounted() : null,
                st.history());
    }

    private static Instant later(Instant a, Instant b) {
        return a.isAfter(b) ? a : b;
    }

    /** Appends this evaluation's index values for the rule's aggregates and drops samples past the window. */
    private static RuleState withHistory(CompiledRule rule, RuleState st, Scope scope) {
        if (rule.historyWindow.isZero()) {
            return st;
        }
        Instant at = scope.anchor().at;
        Instant from = at.minus(rule.historyWindow);
        List<IndexSample> h = new ArrayList<>(st.history().size() + 2);
        for (IndexSample s : st.history()) {
            if (!s.at().isBefore(from)) {
                h.add(s);
            }
        }
        for (IndexCode code : rule.historyIndices) {
            Optional<IndexResult> r = scope.anchor().index(code);
            if (r.isPresent() && r.get() instanceof IndexValue iv) {
                h.add(new IndexSample(code.code(), at, iv.value()));
            }
        }
        return new RuleState(
                st.ruleId(),
                st.episode(),
                st.lastMetAt(),
                st.lastEvaluableAt(),
                st.notMetSince(),
                st.runStart(),
                st.runCount(),
                st.runLastCounted(),
                h);
    }

    private static RuleEvaluation evaluation(
            CompiledRule rule,
            String patientId,
            Instant at,
            Outcome outcome,
            String tier,
            DataQualityReason reason,
            String detail,
            Episode episode,
            Explanation explanation) {
        RuleDefinition d = rule.definition;
        return new RuleEvaluation(
                patientId, d.id(), d.version(), d.digest(), at, outcome, tier, reason, detail, episode, explanation);
    }
}
