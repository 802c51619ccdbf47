package org.lungflag.rules.units;

import java.util.List;
import java.util.Objects;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.NumberText;
import org.lungflag.rules.measure.OriginalQuantity;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.UnitRepair;
import org.lungflag.rules.quality.DataQualityReason;

/**
 * The single normalization path for numeric values, shared by the live service and the replay command (design
 * invariant 2): UCUM unit → the kind's canonical unit, the FiO2 percent/fraction rules, then plausibility.
 * Never throws on a value or unit: the answer is {@link NormalizationResult.Accepted} or {@link
 * NormalizationResult.Refused} with a reason and a detail naming kind, value and unit (never patient data).
 *
 * <p>FiO2, exactly as clinical-reference §9.2 and check vector T50:
 *
 * <ul>
 *   <li>unit {@code %}, value 21–100 → value / 100;
 *   <li>unit {@code 1} (or another dimensionless unit), fraction 0.21–1.0 → as is;
 *   <li>unit {@code %}, value 0.21–1.0 → accepted as that fraction with an explicit {@link UnitRepair} ({@link
 *       DataQualityReason#FIO2_FRACTION_CHARTED_AS_PERCENT}), never silently;
 *   <li>unit {@code 1}, value above 1.0 → refused, {@link DataQualityReason#FIO2_UNIT_CONTRADICTS_VALUE};
 *   <li>below 0.21 (or below 21 %) → refused, {@link DataQualityReason#FIO2_BELOW_ROOM_AIR} (often an O2 flow).
 * </ul>
 *
 * Saturations (SpO2, SaO2) charted in % become fractions by ordinary UCUM conversion.
 */
public final class MeasurementNormalizer {

    static final double ROOM_AIR_FRACTION = 0.21;

    private final UnitConverter converter;
    private final PlausibilityRanges ranges;

    public MeasurementNormalizer(UnitConverter converter, PlausibilityRanges ranges) {
        this.converter = Objects.requireNonNull(converter, "converter");
        this.ranges = Objects.requireNonNull(ranges, "ranges");
    }

    /** The shared converter and the default plausibility ranges. */
    public MeasurementNormalizer() {
        this(UnitConverter.shared(), PlausibilityRanges.defaults());
    }

    public PlausibilityRanges ranges() {
        return ranges;
    }

    public NormalizationResult normalize(RawMeasurement raw) {
        Objects.requireNonNull(raw, "raw");
        QuantityKind kind = raw.kind();
        double value = raw.value();
        String unit = raw.ucumUnit();
        if (!Double.isFinite(value)) {
            return refuse(DataQualityReason.NON_FINITE_VALUE, kind.label() + " value " + value + " is not finite");
        }
        ConversionResult conversion = converter.toCanonical(kind, value, unit);
        if (conversion instanceof ConversionResult.Failed failed) {
            return refuse(failed.reason(), kind.label() + " " + number(value) + ": " + failed.detail());
        }
        double canonical = ((ConversionResult.Converted) conversion).value();
        List<UnitRepair> repairs = List.of();

        if (kind == QuantityKind.FIO2) {
            boolean percent = "%".equals(unit.trim());
            if (percent && canonical < ROOM_AIR_FRACTION) {
                if (value >= ROOM_AIR_FRACTION && value <= 1.0) {
                    canonical = value;
                    repairs = List.of(new UnitRepair(
                            DataQualityReason.FIO2_FRACTION_CHARTED_AS_PERCENT.code(),
                            "FiO2 " + number(value) + " charted with unit % read as the fraction " + number(value)));
                } else {
                    return refuse(
                            DataQualityReason.FIO2_BELOW_ROOM_AIR,
                            "FiO2 " + number(value) + " % is below room air (21 %); often an O2 flow in L/min"
                                    + " charted as FiO2");
                }
            } else if (!percent && canonical > 1.0) {
                return refuse(
                        DataQualityReason.FIO2_UNIT_CONTRADICTS_VALUE,
                        "FiO2 " + number(value) + " " + Units.quote(unit) + " is a fraction above 1.0; refused rather"
                                + " than guessed as percent");
            } else if (!percent && canonical < ROOM_AIR_FRACTION) {
                return refuse(
                        DataQualityReason.FIO2_BELOW_ROOM_AIR,
                        "FiO2 " + number(value) + " " + Units.quote(unit) + " is below room air (0.21); often an O2"
                                + " flow in L/min charted as FiO2");
            }
        }

        PlausibilityRanges.Range range = ranges.ranges().get(kind);
        if (range != null && !range.contains(canonical)) {
            return refuse(
                    DataQualityReason.IMPLAUSIBLE_VALUE,
                    kind.label() + " " + number(value) + " " + Units.quote(unit) + " = " + number(canonical) + " "
                            + kind.canonicalUnit() + " lies outside the plausible range " + number(range.min()) + "–"
                            + number(range.max()) + " " + kind.canonicalUnit());
        }
        return new NormalizationResult.Accepted(new Measurement(
                kind,
                canonical,
                raw.time(),
                raw.role(),
                raw.specimen(),
                raw.source(),
                new OriginalQuantity(value, unit),
                repairs));
    }

    private static NormalizationResult refuse(DataQualityReason reason, String detail) {
        return new NormalizationResult.Refused(reason, detail);
    }

    static String number(double v) {
        return NumberText.of(v);
    }
}
