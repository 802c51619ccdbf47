package org.lungflag.rules.units;

import java.util.Collections;
import java.util.EnumMap;
import java.util.Map;
import java.util.Objects;
import java.util.Optional;
import org.lungflag.rules.measure.QuantityKind;

/**
 * Physiological plausibility gates, in each kind's canonical unit, applied after unit conversion: a value outside
 * its range is refused as {@link org.lungflag.rules.quality.DataQualityReason#IMPLAUSIBLE_VALUE}. A kind without a
 * range is not gated. Configurable: the service binds overrides from configuration ({@link #withOverrides}).
 *
 * <p>Every default is <b>common practice, no source</b>. Those for PaO2, PaCO2, pH, SaO2/SpO2, FiO2, PEEP, Pplat,
 * Ppeak, VT, RR, mean airway pressure, height and Hb are the suggested defaults of clinical-reference §0; the
 * others (EtCO2, mixed-expired PCO2, minute ventilation, O2 flow, inspiratory flow, weight, barometric pressure)
 * are Lungflag's own choices, equally without a source. Sites should review them (e.g. a pediatric unit will
 * widen height and weight).
 *
 * @param ranges inclusive ranges by kind, canonical units
 */
public record PlausibilityRanges(Map<QuantityKind, Range> ranges) {

    /** An inclusive range in the kind's canonical unit. */
    public record Range(double min, double max) {
        public Range {
            if (!Double.isFinite(min) || !Double.isFinite(max) || min > max) {
                throw new IllegalArgumentException(
                        "a plausibility range needs finite min ≤ max, got " + min + "–" + max);
            }
        }

        public boolean contains(double value) {
            return value >= min && value <= max;
        }
    }

    /** The source label of every default. */
    public static final String DEFAULT_SOURCE = "common practice, no source";

    private static final PlausibilityRanges DEFAULTS;

    static {
        Map<QuantityKind, Range> d = new EnumMap<>(QuantityKind.class);
        // clinical-reference §0 (common practice, no source)
        d.put(QuantityKind.PAO2, new Range(20, 700));
        d.put(QuantityKind.PACO2, new Range(10, 150));
        d.put(QuantityKind.PH, new Range(6.5, 8.0));
        d.put(QuantityKind.SAO2, new Range(0.50, 1.00));
        d.put(QuantityKind.SPO2, new Range(0.50, 1.00));
        d.put(QuantityKind.FIO2, new Range(0.21, 1.00));
        d.put(QuantityKind.PEEP, new Range(0, 30));
        d.put(QuantityKind.PLATEAU_PRESSURE, new Range(5, 60));
        d.put(QuantityKind.PEAK_PRESSURE, new Range(5, 80));
        d.put(QuantityKind.TIDAL_VOLUME, new Range(50, 2000));
        d.put(QuantityKind.TIDAL_VOLUME_EXPIRED, new Range(50, 2000));
        d.put(QuantityKind.RESPIRATORY_RATE, new Range(4, 60));
        d.put(QuantityKind.MEAN_AIRWAY_PRESSURE, new Range(3, 40));
        d.put(QuantityKind.BODY_HEIGHT, new Range(100, 230));
        d.put(QuantityKind.HEMOGLOBIN, new Range(3, 25));
        // Lungflag's additions (common practice, no source)
        d.put(QuantityKind.ETCO2, new Range(0, 150));
        d.put(QuantityKind.MIXED_EXPIRED_PCO2, new Range(0, 150));
        d.put(QuantityKind.MINUTE_VENTILATION, new Range(0.5, 50));
        d.put(QuantityKind.O2_FLOW, new Range(0, 80));
        d.put(QuantityKind.INSPIRATORY_FLOW, new Range(1, 200));
        d.put(QuantityKind.BODY_WEIGHT, new Range(2, 400));
        d.put(QuantityKind.BAROMETRIC_PRESSURE, new Range(400, 800));
        DEFAULTS = new PlausibilityRanges(d);
    }

    public PlausibilityRanges {
        Objects.requireNonNull(ranges, "ranges");
        EnumMap<QuantityKind, Range> copy = new EnumMap<>(QuantityKind.class);
        for (Map.Entry<QuantityKind, Range> e : ranges.entrySet()) {
            QuantityKind kind = Objects.requireNonNull(e.getKey(), "kind");
            if (kind.isCategorical()) {
                throw new IllegalArgumentException(kind + " is categorical and has no plausibility range");
            }
            copy.put(kind, Objects.requireNonNull(e.getValue(), "range for " + kind));
        }
        ranges = Collections.unmodifiableMap(copy);
    }

    /** The defaults described above. */
    public static PlausibilityRanges defaults() {
        return DEFAULTS;
    }

    /** These ranges with some replaced (configuration overrides win). */
    public PlausibilityRanges withOverrides(Map<QuantityKind, Range> overrides) {
        EnumMap<QuantityKind, Range> merged = new EnumMap<>(QuantityKind.class);
        merged.putAll(ranges);
        merged.putAll(overrides);
        return new PlausibilityRanges(merged);
    }

    public PlausibilityRanges with(QuantityKind kind, double min, double max) {
        return withOverrides(Map.of(kind, new Range(min, max)));
    }

    public Optional<Range> rangeFor(QuantityKind kind) {
        return Optional.ofNullable(ranges.get(kind));
    }

    /** True when the kind has no range or the value lies inside it. */
    public boolean isPlausible(QuantityKind kind, double value) {
        Range r = ranges.get(kind);
        return r == null || r.contains(value);
    }
}
