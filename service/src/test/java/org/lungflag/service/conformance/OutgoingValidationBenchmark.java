package org.lungflag.service.conformance;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.validation.FhirValidator;
import java.lang.management.ManagementFactory;
import java.lang.management.ThreadMXBean;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Random;
import org.hl7.fhir.common.hapi.validation.validator.FhirInstanceValidator;
import org.hl7.fhir.r4.model.Resource;
import org.lungflag.service.offline.Pipelines;

/**
 * Benchmark (figures, not a test): what the outbox's conformance check costs per resource with HAPI's own
 * instance-validator module (a new core validator per resource) and with {@link ReusingInstanceValidator}, side by
 * side in one JVM over the same resources (the demo scenario's Flags, Provenances and derived-index Observations and
 * broken copies of them, as in {@code ReusingInstanceValidatorTest}). Both are warmed up first (the first validation
 * loads the core definitions, several seconds), then measured in alternating rounds; the medians and their ratio are
 * printed. Arguments: rounds (default 5), passes over the corpus per round (default 3).
 */
public final class OutgoingValidationBenchmark {

    private OutgoingValidationBenchmark() {}

    public static void main(String[] args) {
        int rounds = args.length > 0 ? Integer.parseInt(args[0]) : 5;
        int passes = args.length > 1 ? Integer.parseInt(args[1]) : 3;
        FhirContext fhir = Pipelines.fhirContext();
        List<Resource> corpus = ReusingInstanceValidatorTest.corpus(new Random(11));
        FhirValidator hapi = ConformanceValidator.validatorWithAllCoreDefinitions(fhir, FhirInstanceValidator::new);
        FhirValidator reusing = ConformanceValidator.validatorWithAllCoreDefinitions(
                fhir, chain -> new ReusingInstanceValidator(chain, ConformanceValidator.VALIDATIONS_PER_INSTANCE));
        System.out.printf(
                Locale.ROOT, "corpus: %d resources; %d rounds of %d passes each%n", corpus.size(), rounds, passes);
        for (int w = 0; w < 2; w++) {
            run(hapi, corpus, 1);
            run(reusing, corpus, 1);
        }
        List<double[]> hapiRounds = new ArrayList<>();
        List<double[]> reusingRounds = new ArrayList<>();
        for (int r = 0; r < rounds; r++) {
            double[] h = run(hapi, corpus, passes);
            double[] u = run(reusing, corpus, passes);
            hapiRounds.add(h);
            reusingRounds.add(u);
            System.out.printf(
                    Locale.ROOT,
                    "round %d: HAPI's module %.2f ms per resource (%.2f ms CPU), reusing %.2f ms (%.2f ms CPU),"
                            + " ratio %.2f%n",
                    r + 1,
                    h[0],
                    h[1],
                    u[0],
                    u[1],
                    h[0] / u[0]);
        }
        double h = median(hapiRounds, 0);
        double u = median(reusingRounds, 0);
        System.out.printf(
                Locale.ROOT,
                "median: HAPI's module %.2f ms per resource (%.2f ms CPU), reusing %.2f ms (%.2f ms CPU);"
                        + " HAPI's takes %.1fx as long%n",
                h,
                median(hapiRounds, 1),
                u,
                median(reusingRounds, 1),
                h / u);
    }

    /** Wall-clock and thread-CPU milliseconds per resource over {@code passes} passes. */
    private static double[] run(FhirValidator validator, List<Resource> corpus, int passes) {
        ThreadMXBean cpu = ManagementFactory.getThreadMXBean();
        long t = System.nanoTime();
        long c = cpu.getCurrentThreadCpuTime();
        int n = 0;
        for (int p = 0; p < passes; p++) {
            for (Resource r : corpus) {
                n += validator.validateWithResult(r).getMessages().isEmpty() ? 0 : 1;
            }
        }
        if (n == 0) {
            throw new IllegalStateException("no resource gave any message: the corpus is not what it should be");
        }
        int total = passes * corpus.size();
        return new double[] {(System.nanoTime() - t) / 1e6 / total, (cpu.getCurrentThreadCpuTime() - c) / 1e6 / total};
    }

    private static double median(List<double[]> rounds, int k) {
        double[] v = rounds.stream().mapToDouble(r -> r[k]).sorted().toArray();
        return v.length % 2 == 1 ? v[v.length / 2] : (v[v.length / 2 - 1] + v[v.length / 2]) / 2;
    }
}
