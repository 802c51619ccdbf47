package org.lungflag.rules.catalog;

import dev.cel.runtime.CelEvaluationException;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Random;

/**
 * Benchmark (figures, not a test): every expression of the default catalog evaluated on the same random bindings by
 * the CEL runtime alone and by {@link RuleExpression} (direct, CEL when it defers), in alternating rounds in one JVM,
 * so the ratio is measured side by side. Run with the rules module's test classpath:
 *
 * <pre>
 * java -cp rules/target/test-classes:rules/target/classes:$(cat rules/target/bench.cp) \
 *   org.lungflag.rules.catalog.RuleExpressionBenchmark [rounds]
 * </pre>
 */
public final class RuleExpressionBenchmark {

    private record Case(RuleExpression expression, RuleExpressionTest.Values values) {}

    public static void main(String[] args) throws Exception {
        int rounds = args.length > 0 ? Integer.parseInt(args[0]) : 10;
        Random random = new Random(7);
        List<Case> cases = new ArrayList<>();
        for (RuleDefinition rule : RuleCatalog.loadDefault().rules()) {
            var variables = RuleExpressionTest.variablesOf(rule);
            var numbers = RuleExpressionTest.numbersOf(rule);
            List<RuleExpression> expressions = new ArrayList<>();
            expressions.add(rule.logic().decision());
            rule.logic().derived().forEach(d -> expressions.add(d.program()));
            rule.logic().basis().stream().filter(f -> f.when() != null).forEach(f -> expressions.add(f.when()));
            for (int i = 0; i < 2000; i++) {
                var values = new RuleExpressionTest.Values(
                        RuleExpressionTest.randomValues(rule, variables, numbers, random));
                for (RuleExpression e : expressions) {
                    cases.add(new Case(e, values));
                }
            }
        }
        double bestCel = 0;
        double bestDirect = 0;
        long sink = 0;
        for (int round = 0; round < rounds; round++) {
            long t = System.nanoTime();
            for (Case c : cases) {
                sink += hash(cel(c));
            }
            bestCel = Math.max(bestCel, cases.size() / ((System.nanoTime() - t) / 1e9));
            t = System.nanoTime();
            for (Case c : cases) {
                sink += hash(direct(c));
            }
            bestDirect = Math.max(bestDirect, cases.size() / ((System.nanoTime() - t) / 1e9));
        }
        System.out.printf(
                Locale.ROOT,
                "rule expressions (%d evaluations per round, best of %d alternating rounds): CEL runtime %.0f/s,"
                        + " RuleExpression %.0f/s, %.1fx (checksum %d)%n",
                cases.size(),
                rounds,
                bestCel,
                bestDirect,
                bestDirect / bestCel,
                sink);
    }

    private static Object cel(Case c) {
        try {
            return c.expression().evalCelOnly(c.values());
        } catch (CelEvaluationException e) {
            return e;
        }
    }

    private static Object direct(Case c) {
        try {
            return c.expression().eval(c.values());
        } catch (CelEvaluationException e) {
            return e;
        }
    }

    private static int hash(Object o) {
        return o instanceof Boolean || o instanceof Number ? o.hashCode() : 1;
    }
}
