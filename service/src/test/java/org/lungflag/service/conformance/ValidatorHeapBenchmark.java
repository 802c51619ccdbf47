package org.lungflag.service.conformance;

import ca.uhn.fhir.context.FhirContext;
import java.lang.management.ManagementFactory;
import java.util.List;
import java.util.Locale;
import java.util.Random;
import org.hl7.fhir.r4.model.Resource;
import org.lungflag.service.offline.Pipelines;

/**
 * Benchmark (figures, not a test): how much heap the outbox's conformance check holds. Prints the used heap after
 * full collections before the validator exists, once it is built, after one and two passes over the corpus of
 * {@code ReusingInstanceValidatorTest} (the demo's outgoing resources and broken copies), and after the validator and
 * its FhirContext are dropped. HAPI keeps the core definitions it loads in a JVM-wide cache (its default profile
 * support's bundle strategies, held by a static map, with each definition's R5 copy in its user data); the check keeps
 * only the subset of {@link OutgoingCoreDefinitions} and releases that cache, so the last figure shows what still
 * stays for the life of the JVM. Run with {@code -XX:+UseSerialGC} for steady figures.
 */
public final class ValidatorHeapBenchmark {

    private ValidatorHeapBenchmark() {}

    public static void main(String[] args) throws InterruptedException {
        List<Resource> corpus = ReusingInstanceValidatorTest.corpus(new Random(7));
        long before = usedMiB();
        FhirContext fhir = Pipelines.fhirContext();
        ConformanceValidator validator = new ConformanceValidator(fhir);
        long built = usedMiB();
        long t = System.nanoTime();
        int errors = 0;
        for (Resource r : corpus) {
            errors += validator.errors(r).size();
        }
        long firstMs = (System.nanoTime() - t) / 1_000_000;
        long once = usedMiB();
        for (Resource r : corpus) {
            validator.errors(r);
        }
        long twice = usedMiB();
        validator = null;
        fhir = null;
        long dropped = usedMiB();
        System.out.printf(
                Locale.ROOT,
                "corpus %d resources (%d errors on the first pass, %d ms); used heap after GC: %d MiB before the"
                        + " validator, %d built, %d after one pass, %d after two, %d with validator and FhirContext"
                        + " dropped; held by the check: %d MiB, of it kept JVM-wide by HAPI: %d MiB%n",
                corpus.size(),
                errors,
                firstMs,
                before,
                built,
                once,
                twice,
                dropped,
                twice - before,
                dropped - before);
    }

    private static long usedMiB() throws InterruptedException {
        for (int i = 0; i < 3; i++) {
            System.gc();
            Thread.sleep(200);
        }
        return ManagementFactory.getMemoryMXBean().getHeapMemoryUsage().getUsed() >> 20;
    }
}
