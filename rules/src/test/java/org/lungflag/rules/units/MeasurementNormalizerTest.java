package org.lungflag.rules.units;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.within;

import java.time.Instant;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.CsvSource;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.OriginalQuantity;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.ValueRole;
import org.lungflag.rules.quality.DataQualityReason;

/** The single normalization path: FiO2 per clinical-reference §9.2 / T50, saturations, plausibility, refusals. */
class MeasurementNormalizerTest {

    private static final Instant T = Instant.parse("2026-03-02T08:00:00Z");
    private static final SourceRef SRC = SourceRef.observation("obs-7", "2");
    private final MeasurementNormalizer normalizer = new MeasurementNormalizer();

    static RawMeasurement raw(QuantityKind kind, double value, String unit) {
        return new RawMeasurement(kind, value, unit, T, ValueRole.SETTING, null, SRC);
    }

    private Measurement accepted(QuantityKind kind, double value, String unit) {
        NormalizationResult r = normalizer.normalize(raw(kind, value, unit));
        assertThat(r).as(kind + " " + value + " " + unit).isInstanceOf(NormalizationResult.Accepted.class);
        return ((NormalizationResult.Accepted) r).measurement();
    }

    private NormalizationResult.Refused refused(QuantityKind kind, double value, String unit) {
        NormalizationResult r = normalizer.normalize(raw(kind, value, unit));
        assertThat(r).as(kind + " " + value + " " + unit).isInstanceOf(NormalizationResult.Refused.class);
        return (NormalizationResult.Refused) r;
    }

    @ParameterizedTest(name = "{3}: FiO2 {0} ''{1}'' → {2}")
    @CsvSource(delimiter = '|', textBlock = """
            40  | %       | 0.40 | clinical-reference T50 (40 %)
            21  | %       | 0.21 | clinical-reference §9.2: % with 21–100 → /100
            100 | %       | 1.00 | clinical-reference §9.2: % with 21–100 → /100
            0.4 | 1       | 0.40 | clinical-reference T50 (0.4 '1')
            0.21 | 1      | 0.21 | clinical-reference §9.2: 1 with 0.21–1.0 as is
            1.0 | 1       | 1.00 | clinical-reference §9.2: 1 with 0.21–1.0 as is
            0.4 | {ratio} | 0.40 | clinical-reference §9.2: {ratio} is a fraction
            """)
    void fio2InPercentOrFractionBecomesAFraction(double value, String unit, double expected, String source) {
        Measurement m = accepted(QuantityKind.FIO2, value, unit);
        assertThat(m.value()).as(source).isCloseTo(expected, within(1e-12));
        assertThat(m.repairs()).isEmpty();
        assertThat(m.original()).isEqualTo(new OriginalQuantity(value, unit));
    }

    @ParameterizedTest(name = "FiO2 {0} % is repaired as a fraction, audibly")
    @CsvSource({"0.4", "0.3", "0.52", "0.21", "1.0"})
    void fio2FractionChartedAsPercentIsRepairedExplicitly(double value) {
        // clinical-reference T50 (0.4 '%') and §9.2: published IG examples chart 0.3 '%' [CODE-V]
        Measurement m = accepted(QuantityKind.FIO2, value, "%");
        assertThat(m.value()).isEqualTo(value);
        assertThat(m.repairs()).singleElement().satisfies(r -> {
            assertThat(r.code()).isEqualTo(DataQualityReason.FIO2_FRACTION_CHARTED_AS_PERCENT.code());
            assertThat(r.description()).contains("%");
        });
    }

    @ParameterizedTest(name = "FiO2 {0} ''{1}'' is refused as {2}")
    @CsvSource({
        "15, %, FIO2_BELOW_ROOM_AIR", // clinical-reference T50: likely an O2 flow
        "20.9, %, FIO2_BELOW_ROOM_AIR",
        "2, %, FIO2_BELOW_ROOM_AIR",
        "0.1, %, FIO2_BELOW_ROOM_AIR",
        "0.15, 1, FIO2_BELOW_ROOM_AIR",
        "0, 1, FIO2_BELOW_ROOM_AIR",
        "40, 1, FIO2_UNIT_CONTRADICTS_VALUE", // clinical-reference §9.2: unit 1 with a value > 1.0
        "1.2, 1, FIO2_UNIT_CONTRADICTS_VALUE",
        "120, %, IMPLAUSIBLE_VALUE",
        "40, mm[Hg], INCOMPATIBLE_UNIT",
        "40, percent, UNKNOWN_UNIT"
    })
    void impossibleFio2IsRefusedWithItsReason(double value, String unit, DataQualityReason reason) {
        NormalizationResult.Refused r = refused(QuantityKind.FIO2, value, unit);
        assertThat(r.reason()).isEqualTo(reason);
        assertThat(r.detail()).contains("FiO2");
    }

    @Test
    void saturationsInPercentBecomeFractions() {
        assertThat(accepted(QuantityKind.SPO2, 92, "%").value()).isCloseTo(0.92, within(1e-12));
        assertThat(accepted(QuantityKind.SAO2, 0.92, "1").value()).isCloseTo(0.92, within(1e-12));
        // a fraction charted with % is not repaired for saturations: 0.95 % is implausible
        assertThat(refused(QuantityKind.SPO2, 0.95, "%").reason()).isEqualTo(DataQualityReason.IMPLAUSIBLE_VALUE);
        assertThat(refused(QuantityKind.SPO2, 95, "1").reason()).isEqualTo(DataQualityReason.IMPLAUSIBLE_VALUE);
    }

    @Test
    void bloodGasesInKilopascalsBecomeMillimetresOfMercury() {
        // clinical-reference ex. 2D (UCUM): 10.7 kPa = 80.257 mmHg
        Measurement m = accepted(QuantityKind.PAO2, 10.7, "kPa");
        assertThat(m.value()).isCloseTo(80.257, within(0.0005));
        assertThat(m.unit()).isEqualTo("mm[Hg]");
        assertThat(m.original()).isEqualTo(new OriginalQuantity(10.7, "kPa"));
        assertThat(m.specimen()).isEqualTo(SpecimenKind.UNKNOWN);
    }

    @Test
    void theSpecimenIsKeptAndNonBloodKindsAreNotApplicable() {
        NormalizationResult r = normalizer.normalize(new RawMeasurement(
                QuantityKind.PAO2, 80, "mm[Hg]", T, ValueRole.MEASUREMENT, SpecimenKind.ARTERIAL, SRC));
        assertThat(((NormalizationResult.Accepted) r).measurement().specimen()).isEqualTo(SpecimenKind.ARTERIAL);
        assertThat(accepted(QuantityKind.PEEP, 8, "cm[H2O]").specimen()).isEqualTo(SpecimenKind.NOT_APPLICABLE);
    }

    @ParameterizedTest(name = "{0} {1} ''{2}'' is implausible")
    @CsvSource({
        "PAO2, 900, mm[Hg]",
        "PAO2, 15, mm[Hg]",
        "PACO2, 1, kPa",
        "PH, 9.1, [pH]",
        "PEEP, 35, cm[H2O]",
        "PLATEAU_PRESSURE, 70, cm[H2O]",
        "TIDAL_VOLUME, 3, L",
        "RESPIRATORY_RATE, 90, /min",
        "BODY_HEIGHT, 8, [ft_i]",
        "HEMOGLOBIN, 300, g/L",
        "MEAN_AIRWAY_PRESSURE, 1, cm[H2O]"
    })
    void valuesOutsideThePlausibleRangeAreRefusedAfterConversion(QuantityKind kind, double value, String unit) {
        // clinical-reference §0 plausibility table (common practice, no source)
        NormalizationResult.Refused r = refused(kind, value, unit);
        assertThat(r.reason()).isEqualTo(DataQualityReason.IMPLAUSIBLE_VALUE);
        assertThat(r.detail()).contains(kind.label()).contains(unit).contains(kind.canonicalUnit());
    }

    @Test
    void plausibilityRangesAreConfigurable() {
        MeasurementNormalizer pediatric = new MeasurementNormalizer(
                UnitConverter.shared(), PlausibilityRanges.defaults().with(QuantityKind.BODY_HEIGHT, 40, 230));
        NormalizationResult r = pediatric.normalize(raw(QuantityKind.BODY_HEIGHT, 85, "cm"));
        assertThat(r.isAccepted()).isTrue();
        assertThat(normalizer.normalize(raw(QuantityKind.BODY_HEIGHT, 85, "cm")).isAccepted())
                .isFalse();
    }

    @Test
    void mbarIsConvertedNotTakenAsCentimetresOfWater() {
        // clinical-reference §9.1: 1 mbar ≈ 1.02 cmH2O; Lungflag converts exactly rather than ignoring the 2 %
        assertThat(accepted(QuantityKind.PEEP, 10, "mbar").value()).isCloseTo(10.19716, within(0.00001));
    }

    @Test
    void nonFiniteValuesAreRefused() {
        assertThat(refused(QuantityKind.PAO2, Double.NaN, "mm[Hg]").reason())
                .isEqualTo(DataQualityReason.NON_FINITE_VALUE);
        assertThat(refused(QuantityKind.PAO2, Double.NEGATIVE_INFINITY, "mm[Hg]")
                        .reason())
                .isEqualTo(DataQualityReason.NON_FINITE_VALUE);
    }

    @Test
    void invalidUcumIsRefusedWithTheUnitNamed() {
        NormalizationResult.Refused r = refused(QuantityKind.PEEP, 8, "cm[H20]");
        assertThat(r.reason()).isEqualTo(DataQualityReason.UNKNOWN_UNIT);
        assertThat(r.detail()).contains("PEEP").contains("cm[H20]");
        assertThat(refused(QuantityKind.PH, 7.4, null).reason()).isEqualTo(DataQualityReason.UNKNOWN_UNIT);
    }
}
