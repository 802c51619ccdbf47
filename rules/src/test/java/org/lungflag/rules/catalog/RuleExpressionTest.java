package org.lungflag.rules.catalog;

import static org.assertj.core.api.Assertions.assertThat;

import dev.cel.runtime.CelEvaluationException;
import dev.cel.runtime.CelUnknownSet;
import dev.cel.runtime.CelVariableResolver;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Objects;
import java.util.Optional;
import java.util.Random;
import org.junit.jupiter.api.Test;
import org.lungflag.rules.measure.BodyPosition;
import org.lungflag.rules.measure.SupportMode;
import org.lungflag.rules.quality.DataQualityReason;

/**
 * The direct evaluator of {@link RuleExpression} against the reference, the CEL runtime itself (the cel-java library
 * that implements the CEL language definition): every expression of the default catalog (each rule's folded decision,
 * derived values and basis conditions) is evaluated both ways on random variable values, with the thresholds
 * themselves, NaN (an index that could not be computed), infinities, signed zero and unbound variables among them.
 * Wherever the direct evaluator answers, its answer must be CEL's; where CEL cannot evaluate (for an unbound variable
 * it answers with its set of unknowns), the direct evaluator must defer to it.
 */
class RuleExpressionTest {

    private static final int TRIALS = 3000;

    private record Expr(String where, RuleExpression expression) {}

    /** A resolver over a map, also offering the direct lookup the engine's scope offers. */
    record Values(Map<String, Object> map) implements CelVariableResolver, RuleExpression.DirectValues {
        @Override
        public Optional<Object> find(String name) {
            return Optional.ofNullable(map.get(name));
        }

        @Override
        public Object valueOrNull(String name) {
            return map.get(name);
        }
    }

    /** The same values through CEL's resolver interface only. */
    private record PlainValues(Map<String, Object> map) implements CelVariableResolver {
        @Override
        public Optional<Object> find(String name) {
            return Optional.ofNullable(map.get(name));
        }
    }

    @Test
    void theDirectEvaluatorGivesCelsAnswerOnEveryCatalogExpression() throws Exception {
        RuleCatalog catalog = RuleCatalog.loadDefault();
        Random random = new Random(20261202L);
        int compared = 0;
        int answeredDirectly = 0;
        int celFailed = 0;
        for (RuleDefinition rule : catalog.rules()) {
            Map<String, VariableType> variables = variablesOf(rule);
            List<Double> numbers = numbersOf(rule);
            List<Expr> expressions = new ArrayList<>();
            expressions.add(new Expr(rule.id() + " decision", rule.logic().decision()));
            for (RuleLogic.Derived d : rule.logic().derived()) {
                expressions.add(new Expr(rule.id() + " derived " + d.name(), d.program()));
            }
            for (RuleLogic.BasisFragment f : rule.logic().basis()) {
                if (f.when() != null) {
                    expressions.add(new Expr(rule.id() + " basis when " + f.condition(), f.when()));
                }
            }
            for (Expr e : expressions) {
                assertThat(e.expression().isDirect())
                        .as("%s uses only what the direct evaluator covers", e.where())
                        .isTrue();
                for (int t = 0; t < TRIALS; t++) {
                    Map<String, Object> values = randomValues(rule, variables, numbers, random);
                    Object cel;
                    try {
                        cel = e.expression().evalCelOnly(new PlainValues(values));
                    } catch (CelEvaluationException failed) {
                        cel = failed;
                    }
                    if (cel instanceof CelEvaluationException || cel instanceof CelUnknownSet) {
                        celFailed++; // an unbound variable: CEL answers with the unknowns (or fails)
                    }
                    for (CelVariableResolver resolver : List.of(new Values(values), new PlainValues(values))) {
                        Optional<Object> direct = e.expression().evalDirectOnly(resolver);
                        if (direct.isPresent()) {
                            answeredDirectly++;
                            assertThat(cel)
                                    .as(
                                            "%s with %s: CEL gives %s, the direct evaluator %s",
                                            e.where(), values, cel, direct.get())
                                    .isNotInstanceOfAny(CelEvaluationException.class, CelUnknownSet.class);
                            assertThat(same(direct.get(), cel))
                                    .as(
                                            "%s with %s: CEL gives %s, the direct evaluator %s",
                                            e.where(), values, cel, direct.get())
                                    .isTrue();
                        }
                        // and the combined path always gives CEL's answer
                        Object combined;
                        try {
                            combined = e.expression().eval(resolver);
                        } catch (CelEvaluationException failed) {
                            combined = failed;
                        }
                        if (cel instanceof CelEvaluationException) {
                            assertThat(combined).isInstanceOf(CelEvaluationException.class);
                        } else if (cel instanceof CelUnknownSet) {
                            assertThat(combined).isInstanceOf(CelUnknownSet.class);
                        } else {
                            assertThat(same(combined, cel))
                                    .as("%s with %s", e.where(), values)
                                    .isTrue();
                        }
                    }
                    compared++;
                }
            }
        }
        System.out.printf(
                "rule expressions: %d random evaluations compared with CEL, %d answered directly (of %d tries),"
                        + " %d that CEL could not evaluate (an unbound variable)%n",
                compared, answeredDirectly, 2 * compared, celFailed);
        assertThat(compared).isGreaterThan(50_000);
        // the fast path is the one actually taken, and CEL's failures were tried too
        assertThat(answeredDirectly).isGreaterThan(2 * compared * 9 / 10);
        assertThat(celFailed).isPositive();
    }

    private static boolean same(Object a, Object b) {
        if (a instanceof Double x && b instanceof Double y) {
            return Double.compare(x, y) == 0 || (x.isNaN() && y.isNaN());
        }
        return Objects.equals(a, b) && a.getClass() == b.getClass();
    }

    static Map<String, VariableType> variablesOf(RuleDefinition rule) {
        Map<String, VariableType> v = new LinkedHashMap<>();
        RuleVariables.standard().forEach((name, variable) -> v.put(name, variable.type()));
        for (ParameterDefinition p : rule.parameters()) {
            switch (p.type()) {
                case NUMBER -> v.put("params." + p.name(), VariableType.DOUBLE);
                case INTEGER -> v.put("params." + p.name(), VariableType.INT);
                case BOOLEAN -> v.put("params." + p.name(), VariableType.BOOL);
                default -> {}
            }
        }
        for (Aggregate a : rule.aggregates()) {
            v.put(a.name(), a.function() == AggregateFunction.COUNT ? VariableType.INT : VariableType.DOUBLE);
            v.put(a.name() + "_available", VariableType.BOOL);
            v.put(a.name() + "_count", VariableType.INT);
        }
        for (RuleLogic.Derived d : rule.logic().derived()) {
            v.put(d.name(), d.type());
        }
        return v;
    }

    /** The rule's own thresholds and their neighbours, so the boundaries are hit exactly. */
    static List<Double> numbersOf(RuleDefinition rule) {
        List<Double> n = new ArrayList<>(
                List.of(0.0, -0.0, 1.0, -1.0, Double.NaN, Double.POSITIVE_INFINITY, Double.NEGATIVE_INFINITY, 1e300));
        for (ParameterDefinition p : rule.parameters()) {
            if (p.defaultValue() instanceof Number x) {
                double d = x.doubleValue();
                n.add(d);
                n.add(Math.nextUp(d));
                n.add(Math.nextDown(d));
            }
        }
        return n;
    }

    private static final List<String> TEXTS = texts();

    private static List<String> texts() {
        List<String> t = new ArrayList<>(List.of("", "male", "female", "other", "unknown"));
        for (SupportMode m : SupportMode.values()) {
            t.add(m.name());
        }
        for (BodyPosition p : BodyPosition.values()) {
            t.add(p.name());
        }
        for (DataQualityReason r : DataQualityReason.values()) {
            t.add(r.code());
        }
        return t;
    }

    static Map<String, Object> randomValues(
            RuleDefinition rule, Map<String, VariableType> variables, List<Double> numbers, Random random) {
        Map<String, Object> values = new HashMap<>();
        for (Map.Entry<String, VariableType> v : variables.entrySet()) {
            if (random.nextInt(200) == 0) {
                continue; // unbound: CEL fails, unless the expression does not need it
            }
            Object value = switch (v.getValue()) {
                case DOUBLE ->
                    random.nextInt(3) == 0
                            ? numbers.get(random.nextInt(numbers.size()))
                            : random.nextDouble() * 600 - 50;
                case INT ->
                    switch (random.nextInt(4)) {
                        case 0 -> (long) random.nextInt(3) - 1;
                        case 1 -> (long) random.nextInt(200);
                        case 2 -> numbers.get(random.nextInt(numbers.size())).longValue();
                        default -> random.nextInt(50) == 0 ? Long.MAX_VALUE : (long) random.nextInt(20);
                    };
                case BOOL -> random.nextBoolean();
                case STRING -> TEXTS.get(random.nextInt(TEXTS.size()));
            };
            values.put(v.getKey(), value);
        }
        // the parameters mostly at their defaults, as the engine binds them
        for (ParameterDefinition p : rule.parameters()) {
            if (random.nextInt(4) != 0 && values.containsKey("params." + p.name())) {
                Object d = p.defaultValue();
                switch (p.type()) {
                    case NUMBER -> values.put("params." + p.name(), ((Number) d).doubleValue());
                    case INTEGER -> values.put("params." + p.name(), ((Number) d).longValue());
                    case BOOLEAN -> values.put("params." + p.name(), d);
                    default -> {}
                }
            }
        }
        return values;
    }
}
