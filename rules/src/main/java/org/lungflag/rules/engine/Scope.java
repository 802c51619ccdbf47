package org.lungflag.rules.engine;

import dev.cel.runtime.CelEvaluationException;
import dev.cel.runtime.CelVariableResolver;
import java.time.Duration;
import java.time.Instant;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import org.lungflag.rules.catalog.Aggregate;
import org.lungflag.rules.catalog.AggregateFunction;
import org.lungflag.rules.catalog.Population;
import org.lungflag.rules.catalog.RuleExpression;
import org.lungflag.rules.catalog.RuleLogic;
import org.lungflag.rules.catalog.RuleVariables;
import org.lungflag.rules.index.IndexCode;
import org.lungflag.rules.index.IndexResult;
import org.lungflag.rules.index.IndexValue;
import org.lungflag.rules.index.NotEvaluable;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.PositionState;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.SupportMode;
import org.lungflag.rules.measure.SupportState;
import org.lungflag.rules.pairing.PairedInputs;
import org.lungflag.rules.timeline.PatientTimeline;

/**
 * The values one rule sees at one anchor: binds the engine's variables lazily (only what an expression asks for is
 * computed), evaluates derived values and window aggregates on demand and caches them for the evaluation.
 */
final class Scope implements CelVariableResolver, RuleExpression.DirectValues {

    /** What is shared by every rule evaluated at one anchor. */
    static final class Anchor {
        final Instant at;
        final PatientTimeline timeline;
        final PairedInputs paired;
        final IndexProvider.Indices indices;
        final Integer ageYears;
        final String sex;
        final SupportState support;
        final PositionState position;
        final Duration measurementLookBack;
        private final Map<QuantityKind, Optional<Measurement>> measurements =
                new java.util.EnumMap<>(QuantityKind.class);

        Anchor(
                Instant at,
                PatientTimeline timeline,
                PairedInputs paired,
                IndexProvider.Indices indices,
                Integer ageYears,
                String sex,
                Duration measurementLookBack) {
            this.at = at;
            this.timeline = timeline;
            this.paired = paired;
            this.indices = indices;
            this.ageYears = ageYears;
            this.sex = sex;
            this.support = paired.support().orElse(null);
            this.position = paired.position().orElse(null);
            this.measurementLookBack = measurementLookBack;
        }

        /** The measurement of a kind in force at the anchor (arterial samples only for blood-gas kinds). */
        Optional<Measurement> measurement(QuantityKind kind) {
            Optional<Measurement> m = measurements.get(kind);
            if (m == null) {
                m = RuleVariables.arterialOnly(kind) ? latestArterial(kind) : paired.latest(kind);
                measurements.put(kind, m);
            }
            return m;
        }

        private Optional<Measurement> latestArterial(QuantityKind kind) {
            List<Measurement> window = timeline.measurementsBetween(kind, at.minus(measurementLookBack), at);
            for (int i = window.size() - 1; i >= 0; i--) {
                if (window.get(i).specimen() == SpecimenKind.ARTERIAL) {
                    return Optional.of(window.get(i));
                }
            }
            return Optional.empty();
        }

        Optional<IndexResult> index(IndexCode code) {
            return indices.get(code);
        }
    }

    private final Anchor anchor;
    private final CompiledRule rule;
    private final RuleState state;
    private Map<String, Object> cache;

    Scope(Anchor anchor, CompiledRule rule, RuleState state) {
        this.anchor = anchor;
        this.rule = rule;
        this.state = state;
    }

    Anchor anchor() {
        return anchor;
    }

    CompiledRule rule() {
        return rule;
    }

    @Override
    public Optional<Object> find(String name) {
        Object v = value(name);
        return v == null ? Optional.empty() : Optional.of(v);
    }

    @Override
    public Object valueOrNull(String name) {
        return value(name);
    }

    /** The bound value of a variable, or {@code null} if the name is not known. */
    Object value(String name) {
        if (name.startsWith("params.")) {
            return rule.celParameters.get(name);
        }
        RuleVariables.Variable v = RuleVariables.standard().get(name);
        if (v != null) {
            return standard(v);
        }
        if (cache != null && cache.containsKey(name)) {
            return cache.get(name);
        }
        Object computed = computeLocal(name);
        if (computed != null) {
            if (cache == null) {
                cache = new HashMap<>(8);
            }
            cache.put(name, computed);
        }
        return computed;
    }

    private Object computeLocal(String name) {
        RuleLogic.Derived d = rule.derived.get(name);
        if (d != null) {
            String alias = rule.derivedVariables.get(name);
            if (alias != null && value(alias) instanceof Boolean b) {
                return b; // a bare identifier: CEL would return this very value
            }
            try {
                return d.program().eval(this);
            } catch (CelEvaluationException e) {
                throw new IllegalStateException(
                        "derived value " + name + " of rule " + rule.definition.id() + " failed: " + e.getMessage(), e);
            }
        }
        for (Aggregate a : rule.definition.aggregates()) {
            if (name.equals(a.name()) || name.equals(a.name() + "_available") || name.equals(a.name() + "_count")) {
                computeAggregate(a);
                return cache.get(name);
            }
        }
        return null;
    }

    private Object standard(RuleVariables.Variable v) {
        switch (v.origin()) {
            case INDEX_VALUE -> {
                IndexResult r = anchor.index(v.index()).orElse(null);
                return r instanceof IndexValue iv ? iv.value() : Double.NaN;
            }
            case INDEX_AVAILABLE -> {
                return anchor.index(v.index()).map(IndexResult::isEvaluable).orElse(false);
            }
            case INDEX_REASON -> {
                IndexResult r = anchor.index(v.index()).orElse(null);
                return r instanceof NotEvaluable ne ? ne.reason().code() : "";
            }
            case MEASUREMENT_VALUE -> {
                Optional<Measurement> m = anchor.measurement(v.kind());
                if (m.isEmpty()) {
                    return Double.NaN;
                }
                return v.percent() ? m.get().value() * 100.0 : m.get().value();
            }
            case MEASUREMENT_AVAILABLE -> {
                return anchor.measurement(v.kind()).isPresent();
            }
            case AGE_YEARS -> {
                return anchor.ageYears == null ? -1L : (long) anchor.ageYears;
            }
            case AGE_KNOWN -> {
                return anchor.ageYears != null;
            }
            case PEDIATRIC -> {
                return anchor.ageYears != null && anchor.ageYears < Population.ADULT_AGE_YEARS;
            }
            case SEX -> {
                return anchor.sex;
            }
            case SUPPORT_MODE -> {
                return anchor.support == null ? "" : anchor.support.mode().name();
            }
            case SUPPORT_KNOWN -> {
                return anchor.support != null;
            }
            case SUPPORT_FLOW -> {
                return anchor.support == null || anchor.support.flowLitresPerMinute() == null
                        ? Double.NaN
                        : anchor.support.flowLitresPerMinute();
            }
            case SUPPORT_FLOW_AVAILABLE -> {
                return anchor.support != null && anchor.support.flowLitresPerMinute() != null;
            }
            case INVASIVE -> {
                return anchor.support != null && anchor.support.mode() == SupportMode.INVASIVE_VENTILATION;
            }
            case POSITION -> {
                return anchor.position == null ? "" : anchor.position.position().name();
            }
            case POSITION_KNOWN -> {
                return anchor.position != null;
            }
            case PRONE -> {
                return anchor.position != null
                        && anchor.position.position() == org.lungflag.rules.measure.BodyPosition.PRONE;
            }
            default -> throw new IllegalStateException("unbound origin " + v.origin());
        }
    }

    private void computeAggregate(Aggregate a) {
        Duration window = rule.durations.get(a.windowParameter());
        Instant from = anchor.at.minus(window);
        Window w = new Window();
        if (a.index() != null) {
            String code = a.index().code();
            for (IndexSample s : state.history()) {
                if (s.index().equals(code) && !s.at().isBefore(from) && s.at().isBefore(anchor.at)) {
                    w.add(s.value());
                }
            }
            if (anchor.index(a.index()).orElse(null) instanceof IndexValue iv) {
                w.add(iv.value()); // the current value is part of the window
            }
        } else {
            for (Measurement m : anchor.timeline.measurementsBetween(a.kind(), from, anchor.at)) {
                if (!RuleVariables.arterialOnly(a.kind()) || m.specimen() == SpecimenKind.ARTERIAL) {
                    w.add(m.value());
                }
            }
        }
        if (cache == null) {
            cache = new HashMap<>(8);
        }
        cache.put(a.name(), w.result(a.function()));
        cache.put(a.name() + "_available", w.count > 0);
        cache.put(a.name() + "_count", w.count);
    }

    /** The values of one aggregate's window, in clinical order. */
    private static final class Window {
        double min = Double.NaN;
        double max = Double.NaN;
        double first = Double.NaN;
        double last = Double.NaN;
        double sum;
        long count;

        void add(double v) {
            if (count == 0) {
                first = v;
                min = v;
                max = v;
            }
            min = Math.min(min, v);
            max = Math.max(max, v);
            last = v;
            sum += v;
            count++;
        }

        Object result(AggregateFunction f) {
            return switch (f) {
                case MIN -> min;
                case MAX -> max;
                case MEAN -> count == 0 ? Double.NaN : sum / count;
                case FIRST -> first;
                case LAST -> last;
                case COUNT -> count;
            };
        }
    }
}
