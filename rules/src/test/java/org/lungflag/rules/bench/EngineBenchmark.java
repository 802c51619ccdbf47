package org.lungflag.rules.bench;

import java.time.Duration;
import java.time.Instant;
import java.time.LocalDate;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Random;
import java.util.TreeSet;
import org.lungflag.rules.catalog.ParameterOverrides;
import org.lungflag.rules.catalog.RuleCatalog;
import org.lungflag.rules.engine.EngineState;
import org.lungflag.rules.engine.PatientEvaluator;
import org.lungflag.rules.engine.RuleEngine;
import org.lungflag.rules.engine.StepResult;
import org.lungflag.rules.measure.ClinicalFact;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.OriginalQuantity;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.SupportMode;
import org.lungflag.rules.measure.SupportState;
import org.lungflag.rules.measure.ValueRole;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.patient.Sex;
import org.lungflag.rules.timeline.PatientTimeline;

/**
 * Engine throughput and retained heap per tracked patient (targets: at least 20,000 patient-evaluations per second
 * on one core, where one evaluation is every rule at one new anchor including pairing and indices; at most 64 KiB
 * retained per tracked patient for timeline plus evaluator). Prints figures; asserts nothing (DEVELOPERS.md,
 * "Benchmarks").
 *
 * <p>Each invented patient: a ventilated adult over 52 h (so the 48 h window is in steady state), hourly
 * ventilator readings (FiO2, PEEP, set and expired tidal volume, rates, peak, plateau and mean airway pressure,
 * minute ventilation, SpO2), an arterial blood gas every 4 h (PaO2, PaCO2, pH, SaO2, hemoglobin), a height and a
 * support state; every value its own Observation. Arguments: {@code [patients-for-heap] [rounds]}.
 */
public final class EngineBenchmark {

    private static final Instant START = Instant.parse("2026-03-01T00:00:00Z");
    private static final int HOURS = 52;

    private EngineBenchmark() {}

    public static void main(String[] args) {
        int heapPatients = args.length > 0 ? Integer.parseInt(args[0]) : 1000;
        int rounds = args.length > 1 ? Integer.parseInt(args[1]) : 5;
        RuleEngine engine = RuleEngine.create(RuleCatalog.loadDefault(), ParameterOverrides.none());
        System.out.printf(
                Locale.ROOT,
                "rules: %d, JVM %s, %d cores%n",
                engine.catalog().rules().size(),
                System.getProperty("java.version"),
                Runtime.getRuntime().availableProcessors());

        stepThroughput(engine, rounds);
        liveThroughput(engine, rounds);
        retainedHeap(engine, heapPatients);
    }

    /** The pure step function: every rule at each anchor of pre-built timelines, one thread. */
    private static void stepThroughput(RuleEngine engine, int rounds) {
        int patients = 200;
        List<PatientTimeline> timelines = new ArrayList<>();
        List<PatientFacts> facts = new ArrayList<>();
        List<List<Instant>> anchors = new ArrayList<>();
        for (int p = 0; p < patients; p++) {
            PatientFacts pf = patient(p);
            PatientTimeline t = new PatientTimeline(pf.patientId());
            for (ClinicalFact f : patientFacts(p)) {
                t.add(f);
            }
            TreeSet<Instant> points = new TreeSet<>();
            for (QuantityKind k : engine.triggerKinds()) {
                t.timesAfter(k, t.windowStart(), points);
            }
            timelines.add(t);
            facts.add(pf);
            anchors.add(new ArrayList<>(points));
        }
        long evaluations = 0;
        long ruleEvaluations = 0;
        List<Double> rates = new ArrayList<>();
        List<Double> cpuRates = new ArrayList<>();
        java.lang.management.ThreadMXBean threads = java.lang.management.ManagementFactory.getThreadMXBean();
        for (int round = 0; round < rounds + 3; round++) {
            long cpuStarted = threads.getCurrentThreadCpuTime();
            long started = System.nanoTime();
            long n = 0;
            long rn = 0;
            for (int p = 0; p < patients; p++) {
                EngineState s = null;
                for (Instant at : anchors.get(p)) {
                    StepResult r = engine.step(s, timelines.get(p), facts.get(p), at);
                    s = r.next();
                    n++;
                    rn += r.evaluations().size();
                }
            }
            long elapsed = System.nanoTime() - started;
            long cpu = threads.getCurrentThreadCpuTime() - cpuStarted;
            if (round >= 3) {
                evaluations += n;
                ruleEvaluations += rn;
                rates.add(n / (elapsed / 1e9));
                cpuRates.add(n / (cpu / 1e9));
                System.out.printf(
                        Locale.ROOT,
                        "step: round %d: %,d patient-evaluations in %.0f ms = %,.0f /s (%,.0f rule evaluations/s);"
                                + " %,.0f per CPU second of the thread%n",
                        round - 2,
                        n,
                        elapsed / 1e6,
                        n / (elapsed / 1e9),
                        rn / (elapsed / 1e9),
                        n / (cpu / 1e9));
            }
        }
        rates.sort(null);
        cpuRates.sort(null);
        System.out.printf(
                Locale.ROOT,
                "step: median %,.0f patient-evaluations/s, best %,.0f /s (target >= 20,000); per CPU second of the"
                        + " thread median %,.0f (less sensitive to other load); %.1f rule evaluations"
                        + " per patient-evaluation; load average %.1f on %d cores while measuring%n",
                rates.get(rates.size() / 2),
                rates.get(rates.size() - 1),
                cpuRates.get(cpuRates.size() / 2),
                (double) ruleEvaluations / evaluations,
                java.lang.management.ManagementFactory.getOperatingSystemMXBean()
                        .getSystemLoadAverage(),
                Runtime.getRuntime().availableProcessors());
    }

    /** The live path: every fact offered to a per-patient evaluator in clinical order (timeline add included). */
    private static void liveThroughput(RuleEngine engine, int rounds) {
        int patients = 100;
        List<List<ClinicalFact>> feeds = new ArrayList<>();
        for (int p = 0; p < patients; p++) {
            feeds.add(patientFacts(p));
        }
        java.lang.management.ThreadMXBean threads = java.lang.management.ManagementFactory.getThreadMXBean();
        for (int round = 0; round < rounds + 2; round++) {
            long cpuStarted = threads.getCurrentThreadCpuTime();
            long started = System.nanoTime();
            long offered = 0;
            long evaluations = 0;
            for (int p = 0; p < patients; p++) {
                PatientFacts pf = patient(p);
                PatientEvaluator ev = PatientEvaluator.start(engine, new PatientTimeline(pf.patientId()), pf);
                for (ClinicalFact f : feeds.get(p)) {
                    evaluations += ev.offer(f).evaluations().size();
                    offered++;
                }
            }
            long elapsed = System.nanoTime() - started;
            long cpu = threads.getCurrentThreadCpuTime() - cpuStarted;
            if (round >= 2) {
                System.out.printf(
                        Locale.ROOT,
                        "live: round %d: %,d facts offered in %.0f ms = %,.0f facts/s, %,.0f rule evaluations/s"
                                + " (same-time values of a panel re-run their point); %,.0f facts per CPU second%n",
                        round - 1,
                        offered,
                        elapsed / 1e6,
                        offered / (elapsed / 1e9),
                        evaluations / (elapsed / 1e9),
                        offered / (cpu / 1e9));
            }
        }
    }

    /** Heap retained by N tracked patients (timeline + evaluator with its checkpoints), after a 52 h feed. */
    private static void retainedHeap(RuleEngine engine, int patients) {
        for (int round = 0; round < 2; round++) {
            long base = usedAfterGc();
            List<PatientTimeline> timelines = new ArrayList<>(patients);
            for (int p = 0; p < patients; p++) {
                PatientTimeline t = new PatientTimeline(patient(p).patientId());
                patientFacts(p).forEach(t::add);
                timelines.add(t);
            }
            long used = usedAfterGc();
            System.out.printf(
                    Locale.ROOT,
                    "heap: timelines alone: %.1f KiB per patient%n",
                    (used - base) / 1024.0 / timelines.size());
            timelines.clear();
        }
        for (int round = 0; round < 3; round++) {
            long base = usedAfterGc();
            List<PatientEvaluator> tracked = new ArrayList<>(patients);
            for (int p = 0; p < patients; p++) {
                PatientFacts pf = patient(p);
                PatientEvaluator ev = PatientEvaluator.start(engine, new PatientTimeline(pf.patientId()), pf);
                for (ClinicalFact f : patientFacts(p)) {
                    ev.offer(f);
                }
                tracked.add(ev);
            }
            long used = usedAfterGc();
            int facts = tracked.get(0).timeline().size();
            System.out.printf(
                    Locale.ROOT,
                    "heap: round %d: %,d patients retain %.1f MiB = %.1f KiB per patient (%d facts in the window,"
                            + " %d active episodes for patient 0)%n",
                    round + 1,
                    patients,
                    (used - base) / 1048576.0,
                    (used - base) / 1024.0 / patients,
                    facts,
                    tracked.get(0).activeEpisodes().size());
            tracked.clear();
        }
    }

    private static long usedAfterGc() {
        Runtime rt = Runtime.getRuntime();
        long used = Long.MAX_VALUE;
        for (int i = 0; i < 6; i++) {
            System.gc();
            try {
                Thread.sleep(50); // a benchmark, not a test: lets the collector settle
            } catch (InterruptedException e) {
                Thread.currentThread().interrupt();
            }
            used = Math.min(used, rt.totalMemory() - rt.freeMemory());
        }
        return used;
    }

    private static PatientFacts patient(int p) {
        return new PatientFacts("bench-" + p, p % 2 == 0 ? Sex.MALE : Sex.FEMALE, LocalDate.of(1950 + p % 40, 3, 1));
    }

    /** One invented patient's facts in clinical order (canonical units). */
    static List<ClinicalFact> patientFacts(int p) {
        Random r = new Random(p);
        List<ClinicalFact> out = new ArrayList<>();
        long[] id = {1_000_000L * p};
        out.add(new SupportState(SupportMode.INVASIVE_VENTILATION, null, START, ref(id)));
        out.add(m(QuantityKind.BODY_HEIGHT, 160 + r.nextInt(30), START, ValueRole.MEASUREMENT, ref(id)));
        for (int h = 0; h < HOURS; h++) {
            Instant t = START.plus(Duration.ofHours(h)).plus(Duration.ofMinutes(5));
            double fio2 = 0.35 + 0.05 * r.nextInt(8);
            double peep = 5 + r.nextInt(10);
            out.add(m(QuantityKind.FIO2, fio2, t, ValueRole.SETTING, ref(id)));
            out.add(m(QuantityKind.PEEP, peep, t, ValueRole.SETTING, ref(id)));
            out.add(m(QuantityKind.TIDAL_VOLUME, 420, t, ValueRole.SETTING, ref(id)));
            out.add(m(QuantityKind.RESPIRATORY_RATE, 20, t, ValueRole.SETTING, ref(id)));
            out.add(m(QuantityKind.TIDAL_VOLUME_EXPIRED, 380 + r.nextInt(220), t, ValueRole.MEASUREMENT, ref(id)));
            out.add(m(QuantityKind.RESPIRATORY_RATE, 18 + r.nextInt(8), t, ValueRole.MEASUREMENT, ref(id)));
            out.add(m(QuantityKind.PEAK_PRESSURE, peep + 18 + r.nextInt(10), t, ValueRole.MEASUREMENT, ref(id)));
            out.add(m(QuantityKind.PLATEAU_PRESSURE, peep + 10 + r.nextInt(10), t, ValueRole.MEASUREMENT, ref(id)));
            out.add(m(QuantityKind.MEAN_AIRWAY_PRESSURE, peep + 5, t, ValueRole.MEASUREMENT, ref(id)));
            out.add(m(QuantityKind.MINUTE_VENTILATION, 7 + r.nextInt(5), t, ValueRole.MEASUREMENT, ref(id)));
            out.add(m(QuantityKind.SPO2, (88 + r.nextInt(11)) / 100.0, t, ValueRole.MEASUREMENT, ref(id)));
            if (h % 4 == 1) {
                Instant gas = t.plus(Duration.ofMinutes(10));
                out.add(m(QuantityKind.PAO2, 55 + r.nextInt(80), gas, ValueRole.MEASUREMENT, ref(id)));
                out.add(m(QuantityKind.PACO2, 38 + r.nextInt(20), gas, ValueRole.MEASUREMENT, ref(id)));
                out.add(m(QuantityKind.PH, 7.30 + r.nextInt(10) / 100.0, gas, ValueRole.MEASUREMENT, ref(id)));
                out.add(m(QuantityKind.SAO2, (88 + r.nextInt(10)) / 100.0, gas, ValueRole.MEASUREMENT, ref(id)));
                out.add(m(QuantityKind.HEMOGLOBIN, 9 + r.nextInt(5), gas, ValueRole.MEASUREMENT, ref(id)));
            }
        }
        return out;
    }

    private static SourceRef ref(long[] id) {
        return SourceRef.observation(Long.toString(id[0]++), "1");
    }

    private static Measurement m(QuantityKind kind, double value, Instant at, ValueRole role, SourceRef src) {
        SpecimenKind specimen = kind.isBloodSample() ? SpecimenKind.ARTERIAL : SpecimenKind.NOT_APPLICABLE;
        return new Measurement(
                kind, value, at, role, specimen, src, new OriginalQuantity(value, kind.canonicalUnit()), List.of());
    }
}
