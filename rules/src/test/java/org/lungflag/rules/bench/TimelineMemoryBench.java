package org.lungflag.rules.bench;

import java.time.Duration;
import java.time.Instant;
import java.util.List;
import java.util.Locale;
import java.util.UUID;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.SupportMode;
import org.lungflag.rules.measure.SupportState;
import org.lungflag.rules.measure.ValueRole;
import org.lungflag.rules.timeline.PatientTimeline;
import org.lungflag.rules.units.MeasurementNormalizer;
import org.lungflag.rules.units.NormalizationResult;
import org.lungflag.rules.units.RawMeasurement;

/**
 * Retained heap per tracked patient (target ≤ 64 KiB, DEVELOPERS.md "Benchmarks"). Builds N invented timelines of
 * a 48 h window: hourly ventilator readings of 10 kinds, a blood gas of 5 values every 4 h, a height and a support
 * state; every value is its own Observation, normalized through {@link MeasurementNormalizer} from freshly made
 * strings as a JSON parser would hand them over. Feeds 52 h so that window pruning is in steady state. Measures
 * used heap after repeated GC with the timelines held, minus the same without them, over several rounds.
 *
 * <p>Not a unit test: run it by hand (command in DEVELOPERS.md). Arguments: {@code [patients] [numeric|uuid|text]}.
 */
public final class TimelineMemoryBench {

    private static final Instant START = Instant.parse("2026-03-01T00:00:00Z");
    private static final int HOURS = 52;

    private record Reading(QuantityKind kind, double value, String unit, ValueRole role, SpecimenKind specimen) {}

    private static final List<Reading> VENTILATOR = List.of(
            new Reading(QuantityKind.FIO2, 45, "%", ValueRole.SETTING, null),
            new Reading(QuantityKind.PEEP, 10, "cm[H2O]", ValueRole.SETTING, null),
            new Reading(QuantityKind.TIDAL_VOLUME, 420, "mL", ValueRole.SETTING, null),
            new Reading(QuantityKind.RESPIRATORY_RATE, 20, "/min", ValueRole.SETTING, null),
            new Reading(QuantityKind.TIDAL_VOLUME_EXPIRED, 415, "mL", ValueRole.MEASUREMENT, null),
            new Reading(QuantityKind.RESPIRATORY_RATE, 22, "{breaths}/min", ValueRole.MEASUREMENT, null),
            new Reading(QuantityKind.PEAK_PRESSURE, 31, "cm[H2O]", ValueRole.MEASUREMENT, null),
            new Reading(QuantityKind.PLATEAU_PRESSURE, 25, "mbar", ValueRole.MEASUREMENT, null),
            new Reading(QuantityKind.MEAN_AIRWAY_PRESSURE, 15, "cm[H2O]", ValueRole.MEASUREMENT, null),
            new Reading(QuantityKind.SPO2, 93, "%", ValueRole.MEASUREMENT, null));

    private static final List<Reading> BLOOD_GAS = List.of(
            new Reading(QuantityKind.PAO2, 10.7, "kPa", ValueRole.MEASUREMENT, SpecimenKind.ARTERIAL),
            new Reading(QuantityKind.PACO2, 48, "mm[Hg]", ValueRole.MEASUREMENT, SpecimenKind.ARTERIAL),
            new Reading(QuantityKind.PH, 7.36, "[pH]", ValueRole.MEASUREMENT, SpecimenKind.ARTERIAL),
            new Reading(QuantityKind.SAO2, 94, "%", ValueRole.MEASUREMENT, SpecimenKind.ARTERIAL),
            new Reading(QuantityKind.HEMOGLOBIN, 11.8, "g/dL", ValueRole.MEASUREMENT, SpecimenKind.ARTERIAL));

    private final MeasurementNormalizer normalizer = new MeasurementNormalizer();
    private final String ids;
    private long nextId = 104_000;

    private TimelineMemoryBench(String ids) {
        this.ids = ids;
    }

    public static void main(String[] args) {
        int patients = args.length > 0 ? Integer.parseInt(args[0]) : 2000;
        String ids = args.length > 1 ? args[1].toLowerCase(Locale.ROOT) : "numeric";
        TimelineMemoryBench bench = new TimelineMemoryBench(ids);
        System.out.printf(
                Locale.ROOT,
                "timeline memory: %d patients, %d h fed into a 48 h window, %s resource ids, %s%n",
                patients,
                HOURS,
                ids.equals("uuid") ? "UUID" : ids.equals("text") ? "text (obs-NNNNNN)" : "numeric (HAPI-style)",
                Runtime.version());
        bench.build(50); // warm up the converter cache and class loading
        for (int round = 1; round <= 3; round++) {
            long baseline = usedAfterGc();
            PatientTimeline[] held = bench.build(patients);
            long used = usedAfterGc() - baseline;
            long facts = 0;
            for (PatientTimeline t : held) {
                facts += t.size();
            }
            System.out.printf(
                    Locale.ROOT,
                    "round %d: %.1f KiB retained per patient, %d facts per patient, %.1f bytes per fact%n",
                    round,
                    used / 1024.0 / patients,
                    facts / patients,
                    (double) used / facts);
            if (held.length == 0) {
                System.out.println("(nothing held)");
            }
        }
    }

    private PatientTimeline[] build(int patients) {
        PatientTimeline[] out = new PatientTimeline[patients];
        for (int p = 0; p < patients; p++) {
            PatientTimeline t = new PatientTimeline(new String("pat-" + p));
            add(t, new Reading(QuantityKind.BODY_HEIGHT, 172 + p % 20, "cm", ValueRole.MEASUREMENT, null), START);
            t.add(new SupportState(SupportMode.INVASIVE_VENTILATION, null, START, nextSource()));
            for (int h = 0; h < HOURS; h++) {
                Instant at = START.plus(Duration.ofHours(h)).plusSeconds(60 + p % 600);
                for (Reading r : VENTILATOR) {
                    add(t, r, at);
                }
                if (h % 4 == 0) {
                    for (Reading r : BLOOD_GAS) {
                        add(t, r, at.plusSeconds(120));
                    }
                }
            }
            out[p] = t;
        }
        return out;
    }

    private void add(PatientTimeline t, Reading r, Instant at) {
        RawMeasurement raw =
                new RawMeasurement(r.kind(), r.value(), new String(r.unit()), at, r.role(), r.specimen(), nextSource());
        NormalizationResult result = normalizer.normalize(raw);
        if (!(result instanceof NormalizationResult.Accepted accepted)) {
            throw new IllegalStateException("bench data refused: " + result);
        }
        t.add(accepted.measurement());
    }

    private SourceRef nextSource() {
        String id = switch (ids) {
            case "uuid" -> UUID.randomUUID().toString();
            case "text" -> "obs-" + nextId++;
            default -> Long.toString(nextId++);
        };
        return new SourceRef(new String("Observation"), id, new String("1"));
    }

    private static long usedAfterGc() {
        Runtime rt = Runtime.getRuntime();
        long used = Long.MAX_VALUE;
        for (int i = 0; i < 6; i++) {
            System.gc();
            used = Math.min(used, rt.totalMemory() - rt.freeMemory());
        }
        return used;
    }
}
