package org.lungflag.rules.engine;

import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.Random;
import org.lungflag.rules.measure.ClinicalFact;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.OriginalQuantity;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.SupportMode;
import org.lungflag.rules.measure.SupportState;
import org.lungflag.rules.measure.ValueRole;

/** Invented facts for engine tests: canonical units, one resource per fact. */
final class Facts {

    static final Instant T0 = Instant.parse("2024-03-01T00:00:00Z");
    private int next = 1;
    private final String prefix;

    Facts(String prefix) {
        this.prefix = prefix;
    }

    static Instant at(int hours, int minutes) {
        return T0.plus(Duration.ofHours(hours)).plus(Duration.ofMinutes(minutes));
    }

    SourceRef ref() {
        return SourceRef.observation(prefix + "-" + next++, "1");
    }

    Measurement setting(QuantityKind kind, double value, Instant at) {
        return new Measurement(
                kind,
                value,
                at,
                ValueRole.SETTING,
                SpecimenKind.NOT_APPLICABLE,
                ref(),
                original(kind, value),
                List.of());
    }

    Measurement measured(QuantityKind kind, double value, Instant at) {
        SpecimenKind specimen = kind.isBloodSample() ? SpecimenKind.ARTERIAL : SpecimenKind.NOT_APPLICABLE;
        return new Measurement(
                kind, value, at, ValueRole.MEASUREMENT, specimen, ref(), original(kind, value), List.of());
    }

    SupportState support(SupportMode mode, Instant at) {
        return new SupportState(mode, null, at, ref());
    }

    private static OriginalQuantity original(QuantityKind kind, double value) {
        return new OriginalQuantity(value, kind.canonicalUnit());
    }

    /**
     * A realistic ventilated adult over {@code hours}: hourly ventilator settings and measurements, hourly SpO2,
     * an arterial blood gas every 4 h, values drawn so that bands and thresholds are crossed.
     */
    static List<ClinicalFact> ventilatedDay(long seed, int hours) {
        Random r = new Random(seed);
        Facts f = new Facts("obs" + seed);
        List<ClinicalFact> out = new ArrayList<>();
        out.add(f.support(SupportMode.INVASIVE_VENTILATION, T0));
        out.add(f.measured(QuantityKind.BODY_HEIGHT, 160 + r.nextInt(30), T0));
        for (int h = 0; h < hours; h++) {
            Instant vent = at(h, 5 + r.nextInt(10));
            double fio2 = 0.3 + 0.1 * r.nextInt(7);
            double peep = 4 + r.nextInt(12);
            out.add(f.setting(QuantityKind.FIO2, fio2, vent));
            out.add(f.setting(QuantityKind.PEEP, peep, vent));
            out.add(f.measured(QuantityKind.TIDAL_VOLUME_EXPIRED, 380 + r.nextInt(260), vent));
            out.add(f.measured(QuantityKind.PLATEAU_PRESSURE, peep + 8 + r.nextInt(20), vent));
            out.add(f.measured(QuantityKind.MEAN_AIRWAY_PRESSURE, peep + 4 + r.nextInt(8), vent));
            out.add(f.measured(QuantityKind.MINUTE_VENTILATION, 6 + r.nextInt(60) / 10.0, vent));
            out.add(f.measured(QuantityKind.SPO2, (86 + r.nextInt(14)) / 100.0, vent.plus(Duration.ofMinutes(10))));
            if (h % 4 == 1) {
                Instant gas = vent.plus(Duration.ofMinutes(15));
                out.add(f.measured(QuantityKind.PAO2, 50 + r.nextInt(120), gas));
                out.add(f.measured(QuantityKind.PACO2, 35 + r.nextInt(30), gas));
            }
        }
        return out;
    }
}
