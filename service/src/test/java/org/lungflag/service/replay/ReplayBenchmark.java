package org.lungflag.service.replay;

import ca.uhn.fhir.parser.IParser;
import ca.uhn.fhir.parser.LenientErrorHandler;
import java.io.BufferedReader;
import java.io.BufferedWriter;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.PrintStream;
import java.lang.management.ManagementFactory;
import java.lang.management.MemoryPoolMXBean;
import java.lang.management.MemoryType;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Instant;
import java.time.temporal.ChronoUnit;
import java.util.List;
import java.util.Locale;
import java.util.Random;
import java.util.concurrent.atomic.AtomicLong;
import org.hl7.fhir.r4.model.Enumerations.AdministrativeGender;
import org.hl7.fhir.r4.model.Observation;
import org.hl7.fhir.r4.model.Patient;
import org.lungflag.service.offline.Pipelines;

/**
 * Replay throughput and heap, printed, never asserted (a benchmark, not a test). Writes an invented export of
 * ventilated patients (48 h each: FiO2, PEEP, plateau pressure, tidal volume and respiratory rate every hour, SpO2
 * every hour, a blood gas of PaO2 and PaCO2 every 4 h; 322 Observations per patient), then measures in the same
 * JVM, one after the other:
 *
 * <ol>
 *   <li>parse-only: every line read and parsed with HAPI's JSON parser, on one thread (the floor of one thread);
 *   <li>replay: the whole command on the same file (parse, normalize, spill, evaluate, write all outputs) with its
 *       default threads: one worker per available processor plus the reading/writing thread, so on a machine with
 *       several processors it may use more CPU than parse-only; the line says how many and the CPU time it took;
 * </ol>
 *
 * for the file and for one ten times larger, after {@link #WARMUP_ROUNDS} rounds of both on the small file (so the
 * JIT has compiled both paths before either is measured). Each file gets several rounds with the two paths
 * alternating (a burst of load from a neighbour then spoils one pair, not one side); every round is printed, then
 * the medians and their ratio, and the heap high-water of the replays (the largest heap in use just after a
 * collection, so garbage does not count). Run (see DEVELOPERS.md "Replay"; the second argument is the rounds):
 *
 * <pre>
 * java -Xmx1g -cp "$CP" org.lungflag.service.replay.ReplayBenchmark 100 3
 * </pre>
 */
public final class ReplayBenchmark {

    private ReplayBenchmark() {}

    public static void main(String[] args) throws Exception {
        ReplayCommand.quietLogging();
        int patients = args.length > 0 ? Integer.parseInt(args[0]) : 150;
        int rounds = args.length > 1 ? Integer.parseInt(args[1]) : 3;
        Path dir = Files.createTempDirectory("replay-bench-");
        Path small = dir.resolve("small.ndjson");
        Path large = dir.resolve("large.ndjson");
        long smallObs = write(small, patients, 1);
        long largeObs = write(large, patients * 10, 2);
        System.out.printf(
                Locale.ROOT,
                "files: %,d Observations (%,d MiB), %,d Observations (%,d MiB)%n",
                smallObs,
                Files.size(small) >> 20,
                largeObs,
                Files.size(large) >> 20);
        // warm-up of both paths on the small file, so neither is measured while the JIT is still compiling it
        for (int i = 0; i < WARMUP_ROUNDS; i++) {
            parseOnly(small);
            replay(small, dir.resolve("warm"));
        }
        int threads = Replay.Tuning.defaults().threads();
        for (Path file : List.of(small, large)) {
            long obs = file == small ? smallObs : largeObs;
            double[] parse = new double[rounds];
            double[] replay = new double[rounds];
            double parseCpu = 0;
            double replayCpu = 0;
            HeapSampler heap = new HeapSampler();
            heap.start();
            // the two paths alternate, so a burst of load from a neighbour spoils one pair, not one side
            for (int round = 0; round < rounds; round++) {
                heap.paused = true;
                long cpu0 = cpuNanos();
                parse[round] = parseOnly(file);
                parseCpu += (cpuNanos() - cpu0) / 1e9;
                heap.paused = false;
                cpu0 = cpuNanos();
                replay[round] = replay(file, dir.resolve("out-" + file.getFileName()));
                replayCpu += (cpuNanos() - cpu0) / 1e9;
                System.out.printf(
                        Locale.ROOT,
                        "  %s round %d: parse-only %,.0f Observations/s, replay %,.0f Observations/s = %.0f %%%n",
                        file.getFileName(),
                        round + 1,
                        obs / parse[round],
                        obs / replay[round],
                        100.0 * parse[round] / replay[round]);
            }
            heap.stopSampling();
            double parseMedian = median(parse);
            double replayMedian = median(replay);
            System.out.printf(
                    Locale.ROOT,
                    "%s, median of %d rounds: parse-only (1 thread) %,.0f Observations/s; replay (%d worker threads"
                            + " + 1) %,.0f Observations/s = %.0f %% of parse-only; CPU time per round parse-only"
                            + " %.1f s, replay %.1f s; heap high-water after GC %,d MiB (in use at most %,d MiB)%n",
                    file.getFileName(),
                    rounds,
                    obs / parseMedian,
                    threads,
                    obs / replayMedian,
                    100.0 * parseMedian / replayMedian,
                    parseCpu / rounds,
                    replayCpu / rounds,
                    heap.maxAfterGc.get() >> 20,
                    heap.maxUsed.get() >> 20);
        }
        System.out.printf(
                Locale.ROOT,
                "target: replay >= 50 %% of parse-only; heap bounded as the file grows 10x (%d processors, load"
                        + " average %.2f; CPU time is the whole JVM's, collector and JIT included)%n",
                Runtime.getRuntime().availableProcessors(),
                ManagementFactory.getOperatingSystemMXBean().getSystemLoadAverage());
    }

    /** Rounds of each path on the small file before anything is measured. */
    static final int WARMUP_ROUNDS = 3;

    private static double median(double[] values) {
        double[] sorted = values.clone();
        java.util.Arrays.sort(sorted);
        int n = sorted.length;
        return n % 2 == 1 ? sorted[n / 2] : (sorted[n / 2 - 1] + sorted[n / 2]) / 2;
    }

    /** CPU time of the whole JVM (all threads), or 0 where the platform does not say. */
    private static long cpuNanos() {
        return ManagementFactory.getOperatingSystemMXBean() instanceof com.sun.management.OperatingSystemMXBean os
                ? Math.max(0, os.getProcessCpuTime())
                : 0;
    }

    private static double parseOnly(Path file) throws IOException {
        IParser parser = Pipelines.fhirContext().newJsonParser().setParserErrorHandler(new LenientErrorHandler(false));
        long t0 = System.nanoTime();
        long n = 0;
        try (BufferedReader r = Files.newBufferedReader(file, StandardCharsets.UTF_8)) {
            String line;
            while ((line = r.readLine()) != null) {
                if (parser.parseResource(line) != null) {
                    n++;
                }
            }
        }
        double s = (System.nanoTime() - t0) / 1e9;
        if (n == 0) {
            throw new IllegalStateException("nothing parsed");
        }
        return s;
    }

    private static double replay(Path file, Path out) {
        ByteArrayOutputStream err = new ByteArrayOutputStream();
        long t0 = System.nanoTime();
        int exit = ReplayCommand.run(
                List.of("--input", file.toString(), "--out", out.toString()),
                new PrintStream(err, true, StandardCharsets.UTF_8),
                false);
        double s = (System.nanoTime() - t0) / 1e9;
        if (exit != 0) {
            throw new IllegalStateException("replay exited " + exit + ": " + err);
        }
        return s;
    }

    /** Writes an invented export; returns the number of Observations. */
    static long write(Path file, int patients, long seed) throws IOException {
        Random random = new Random(seed);
        IParser json = ReplayFixtures.FHIR.newJsonParser();
        Instant end = Instant.parse("2026-01-31T00:00:00Z");
        long count = 0;
        try (BufferedWriter w = Files.newBufferedWriter(file, StandardCharsets.UTF_8)) {
            for (int p = 0; p < patients; p++) {
                String id = "bench-" + p;
                Patient patient = new Patient();
                patient.setId(id);
                patient.setGender(p % 2 == 0 ? AdministrativeGender.MALE : AdministrativeGender.FEMALE);
                patient.setBirthDateElement(new org.hl7.fhir.r4.model.DateType((1940 + p % 50) + "-03-15"));
                w.write(json.encodeResourceToString(patient));
                w.newLine();
                Instant start = end.minus(48 + random.nextInt(240), ChronoUnit.HOURS);
                int n = 0;
                w.write(enc(
                        json,
                        ReplayFixtures.quantity(id, n++, "8302-2", 160 + random.nextInt(30), "cm", start, false)));
                w.write(enc(json, ReplayFixtures.support(id, n++, start)));
                count += 2;
                double fio2 = 0.4;
                double pf = 120 + random.nextInt(250);
                for (int h = 0; h < 48; h++) {
                    Instant t = start.plus(h, ChronoUnit.HOURS).plus(5, ChronoUnit.MINUTES);
                    fio2 = Math.max(0.3, Math.min(0.9, fio2 + (random.nextInt(3) - 1) * 0.05));
                    pf = Math.max(60, Math.min(450, pf + random.nextInt(41) - 20));
                    w.write(enc(json, ReplayFixtures.quantity(id, n++, "19994-3", round(fio2), "1", t, true)));
                    w.write(enc(
                            json,
                            ReplayFixtures.quantity(id, n++, "76248-4", 8 + random.nextInt(6), "cm[H2O]", t, true)));
                    w.write(enc(
                            json,
                            ReplayFixtures.quantity(id, n++, "76259-1", 20 + random.nextInt(12), "cm[H2O]", t, false)));
                    w.write(enc(
                            json,
                            ReplayFixtures.quantity(id, n++, "20112-9", 380 + random.nextInt(150), "mL", t, true)));
                    w.write(enc(
                            json,
                            ReplayFixtures.quantity(id, n++, "9279-1", 14 + random.nextInt(14), "/min", t, false)));
                    w.write(enc(
                            json,
                            ReplayFixtures.quantity(
                                    id,
                                    n++,
                                    "59408-5",
                                    88 + random.nextInt(12),
                                    "%",
                                    t.plus(10, ChronoUnit.MINUTES),
                                    false)));
                    count += 6;
                    if (h % 4 == 3) {
                        Instant gas = t.plus(20, ChronoUnit.MINUTES);
                        w.write(enc(
                                json,
                                ReplayFixtures.quantity(
                                        id, n++, "2703-7", Math.max(45, Math.round(pf * fio2)), "mm[Hg]", gas, false)));
                        w.write(enc(
                                json,
                                ReplayFixtures.quantity(
                                        id, n++, "2019-8", 35 + random.nextInt(25), "mm[Hg]", gas, false)));
                        count += 2;
                    }
                }
            }
        }
        return count;
    }

    private static double round(double v) {
        return Math.round(v * 100) / 100.0;
    }

    private static String enc(IParser json, Observation o) {
        return json.encodeResourceToString(o) + "\n";
    }

    /** Samples the heap every 20 ms: in use, and in use just after the last collection (the live set). */
    static final class HeapSampler extends Thread {
        final AtomicLong maxUsed = new AtomicLong();
        final AtomicLong maxAfterGc = new AtomicLong();
        private volatile boolean running = true;
        /** While set (parse-only rounds), samples are not taken: the figures are replay's alone. */
        volatile boolean paused;

        HeapSampler() {
            setDaemon(true);
            System.gc();
        }

        @Override
        public void run() {
            List<MemoryPoolMXBean> pools = ManagementFactory.getMemoryPoolMXBeans().stream()
                    .filter(p -> p.getType() == MemoryType.HEAP)
                    .toList();
            while (running) {
                if (paused) {
                    sleepQuietly();
                    continue;
                }
                long used = 0;
                long afterGc = 0;
                for (MemoryPoolMXBean p : pools) {
                    used += p.getUsage().getUsed();
                    if (p.getCollectionUsage() != null) {
                        afterGc += p.getCollectionUsage().getUsed();
                    }
                }
                maxUsed.accumulateAndGet(used, Math::max);
                maxAfterGc.accumulateAndGet(afterGc, Math::max);
                sleepQuietly();
            }
        }

        private void sleepQuietly() {
            try {
                Thread.sleep(20);
            } catch (InterruptedException e) {
                running = false;
            }
        }

        void stopSampling() throws InterruptedException {
            running = false;
            join();
        }
    }
}
