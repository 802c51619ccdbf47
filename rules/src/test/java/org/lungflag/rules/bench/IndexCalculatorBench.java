package org.lungflag.rules.bench;

import java.time.Duration;
import java.time.Instant;
import java.time.LocalDate;
import java.util.List;
import java.util.Locale;
import org.lungflag.rules.index.IndexCalculator;
import org.lungflag.rules.index.IndexResult;
import org.lungflag.rules.index.IndexSet;
import org.lungflag.rules.index.IndexValue;
import org.lungflag.rules.index.NotEvaluable;
import org.lungflag.rules.index.SiteParameters;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.OriginalQuantity;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.ValueRole;
import org.lungflag.rules.pairing.PairedInputs;
import org.lungflag.rules.pairing.Pairing;
import org.lungflag.rules.pairing.PairingSettings;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.patient.Sex;
import org.lungflag.rules.timeline.PatientTimeline;

/**
 * Throughput of pairing + index computation on one thread (the engine's target is ≥ 20,000 patient-evaluations
 * per second per core for everything). Builds invented 48 h timelines with all inputs present, then repeatedly
 * pairs at a blood-gas time and computes every index; prints evaluations per second for pairing + indices and for
 * the indices alone, over several rounds after warm-up. Not a unit test (command in DEVELOPERS.md).
 */
public final class IndexCalculatorBench {

    private static final Instant START = Instant.parse("2026-03-01T00:00:00Z");

    public static void main(String[] args) {
        int patients = args.length > 0 ? Integer.parseInt(args[0]) : 500;
        PatientTimeline[] timelines = new PatientTimeline[patients];
        for (int p = 0; p < patients; p++) {
            timelines[p] = timeline(p);
        }
        Pairing pairing = new Pairing(PairingSettings.defaults());
        IndexCalculator calculator = new IndexCalculator();
        SiteParameters site = SiteParameters.defaults().withBarometricPressure(720.0);
        PatientFacts patient = new PatientFacts("pat-bench", Sex.FEMALE, LocalDate.of(1965, 2, 3));
        Instant anchor = START.plus(Duration.ofHours(44)).plusSeconds(120);
        PairedInputs[] paired = new PairedInputs[patients];
        for (int p = 0; p < patients; p++) {
            paired[p] = pairing.at(timelines[p], anchor);
        }
        System.out.printf(
                Locale.ROOT,
                "index bench: %d patients, %d facts each, %s%n",
                patients,
                timelines[0].size(),
                Runtime.version());
        long sink = 0;
        int rounds = args.length > 1 ? Integer.parseInt(args[1]) : 10;
        for (int round = 0; round < rounds; round++) {
            int n = 0;
            long t0 = System.nanoTime();
            while (System.nanoTime() - t0 < 1_000_000_000L) {
                for (int p = 0; p < patients; p++) {
                    sink += consume(calculator.compute(pairing.at(timelines[p], anchor), patient, site));
                    n++;
                }
            }
            double pairedPerSecond = n / ((System.nanoTime() - t0) / 1e9);
            n = 0;
            t0 = System.nanoTime();
            while (System.nanoTime() - t0 < 1_000_000_000L) {
                for (int p = 0; p < patients; p++) {
                    sink += consume(calculator.compute(paired[p], patient, site));
                    n++;
                }
            }
            double computePerSecond = n / ((System.nanoTime() - t0) / 1e9);
            System.out.printf(
                    Locale.ROOT,
                    "round %d%s: pairing + indices %,.0f /s (%.1f µs each); indices alone %,.0f /s (%.1f µs each)%n",
                    round + 1,
                    round < 3 ? " (warm-up)" : "",
                    pairedPerSecond,
                    1e6 / pairedPerSecond,
                    computePerSecond,
                    1e6 / computePerSecond);
        }
        System.out.println("(checksum " + sink + ")");
    }

    /** Reads every result, as the engine does, so that nothing can be optimized away. */
    private static long consume(IndexSet set) {
        long h = 0;
        for (IndexResult r : set) {
            h = h * 31
                    + (r instanceof IndexValue v
                            ? Double.doubleToLongBits(v.value()) + v.inputs().size()
                            : ((NotEvaluable) r).reason().ordinal());
        }
        return h;
    }

    private static PatientTimeline timeline(int p) {
        PatientTimeline t = new PatientTimeline("pat-" + p);
        int id = p * 10_000;
        add(t, QuantityKind.BODY_HEIGHT, 165 + p % 20, START, ValueRole.MEASUREMENT, ++id);
        for (int h = 0; h < 48; h++) {
            Instant at = START.plus(Duration.ofHours(h));
            add(t, QuantityKind.FIO2, 0.5, at, ValueRole.SETTING, ++id);
            add(t, QuantityKind.PEEP, 10, at, ValueRole.SETTING, ++id);
            add(t, QuantityKind.TIDAL_VOLUME, 400, at, ValueRole.SETTING, ++id);
            add(t, QuantityKind.RESPIRATORY_RATE, 20, at, ValueRole.SETTING, ++id);
            add(t, QuantityKind.TIDAL_VOLUME_EXPIRED, 395, at, ValueRole.MEASUREMENT, ++id);
            add(t, QuantityKind.RESPIRATORY_RATE, 22, at, ValueRole.MEASUREMENT, ++id);
            add(t, QuantityKind.PEAK_PRESSURE, 30, at, ValueRole.MEASUREMENT, ++id);
            add(t, QuantityKind.PLATEAU_PRESSURE, 24, at, ValueRole.MEASUREMENT, ++id);
            add(t, QuantityKind.MEAN_AIRWAY_PRESSURE, 15, at, ValueRole.MEASUREMENT, ++id);
            add(t, QuantityKind.SPO2, 0.93, at, ValueRole.MEASUREMENT, ++id);
            add(t, QuantityKind.ETCO2, 38, at, ValueRole.MEASUREMENT, ++id);
            add(t, QuantityKind.MINUTE_VENTILATION, 8.7, at, ValueRole.MEASUREMENT, ++id);
            if (h % 4 == 0) {
                Instant gas = at.plusSeconds(120);
                add(t, QuantityKind.PAO2, 78, gas, ValueRole.MEASUREMENT, ++id);
                add(t, QuantityKind.PACO2, 46, gas, ValueRole.MEASUREMENT, ++id);
                add(t, QuantityKind.SAO2, 0.94, gas, ValueRole.MEASUREMENT, ++id);
                add(t, QuantityKind.HEMOGLOBIN, 11.5, gas, ValueRole.MEASUREMENT, ++id);
                add(t, QuantityKind.MIXED_EXPIRED_PCO2, 25, gas, ValueRole.MEASUREMENT, ++id);
            }
        }
        return t;
    }

    private static void add(PatientTimeline t, QuantityKind kind, double value, Instant at, ValueRole role, int id) {
        t.add(new Measurement(
                kind,
                value,
                at,
                role,
                kind.isBloodSample() ? SpecimenKind.ARTERIAL : SpecimenKind.NOT_APPLICABLE,
                SourceRef.observation(Integer.toString(id), "1"),
                new OriginalQuantity(value, kind.canonicalUnit()),
                List.of()));
    }
}
