package org.lungflag.rules.units;

import static org.assertj.core.api.Assertions.assertThat;

import java.time.Instant;
import java.util.Arrays;
import net.jqwik.api.Arbitraries;
import net.jqwik.api.Arbitrary;
import net.jqwik.api.ForAll;
import net.jqwik.api.Property;
import net.jqwik.api.Provide;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.measure.ValueRole;
import org.lungflag.rules.quality.DataQualityReason;

/** The normalizer's promise: whatever the value and unit, an answer and never an exception. */
class MeasurementNormalizerPropertyTest {

    private final MeasurementNormalizer normalizer = new MeasurementNormalizer();

    @Provide
    Arbitrary<QuantityKind> numericKinds() {
        return Arbitraries.of(Arrays.stream(QuantityKind.values())
                .filter(k -> !k.isCategorical())
                .toList());
    }

    @Provide
    Arbitrary<Double> anyDouble() {
        return Arbitraries.oneOf(
                Arbitraries.doubles()
                        .withSpecialValue(Double.NaN)
                        .withSpecialValue(Double.POSITIVE_INFINITY)
                        .withSpecialValue(Double.NEGATIVE_INFINITY)
                        .withSpecialValue(-0.0)
                        .withSpecialValue(Double.MAX_VALUE)
                        .withSpecialValue(Double.MIN_VALUE),
                Arbitraries.doubles().between(-1000, 3000));
    }

    @Provide
    Arbitrary<String> anyUnit() {
        return Arbitraries.oneOf(
                Arbitraries.of(
                        "%",
                        "1",
                        "mm[Hg]",
                        "kPa",
                        "cm[H2O]",
                        "cm[H20]",
                        "mbar",
                        "hPa",
                        "mL",
                        "L",
                        "L/min",
                        "mL/min",
                        "/min",
                        "{breaths}/min",
                        "cm",
                        "[in_i]",
                        "kg",
                        "[lb_av]",
                        "g/dL",
                        "g/L",
                        "[pH]",
                        "Cel",
                        "mol/L",
                        "",
                        " ",
                        "{ratio}",
                        "10*3/uL",
                        "m[Hg]",
                        "%{vol}"),
                Arbitraries.strings().ofMaxLength(12),
                Arbitraries.just(null));
    }

    @Property(tries = 2000)
    void neverThrowsAndAlwaysAnswers(
            @ForAll("numericKinds") QuantityKind kind,
            @ForAll("anyDouble") double value,
            @ForAll("anyUnit") String unit) {
        RawMeasurement raw = new RawMeasurement(
                kind,
                value,
                unit,
                Instant.parse("2026-03-02T08:00:00Z"),
                ValueRole.MEASUREMENT,
                null,
                SourceRef.observation("obs-p", "1"));
        NormalizationResult result = normalizer.normalize(raw);
        if (result instanceof NormalizationResult.Accepted accepted) {
            Measurement m = accepted.measurement();
            assertThat(m.kind()).isEqualTo(kind);
            assertThat(Double.isFinite(m.value())).isTrue();
            assertThat(normalizer.ranges().isPlausible(kind, m.value())).isTrue();
            assertThat(m.original().value()).isEqualTo(value);
        } else {
            NormalizationResult.Refused refused = (NormalizationResult.Refused) result;
            assertThat(refused.reason().use()).isEqualTo(DataQualityReason.Use.REFUSED);
            assertThat(refused.detail()).contains(kind.label()).doesNotContain("\n");
        }
    }

    @Property
    void fio2PercentAndFractionAgree(@ForAll("fio2Percent") double percent) {
        double fromPercent = fio2(percent, "%");
        double fromFraction = fio2(percent / 100.0, "1");
        assertThat(fromPercent).isCloseTo(fromFraction, org.assertj.core.api.Assertions.within(1e-15));
    }

    @Provide
    Arbitrary<Double> fio2Percent() {
        return Arbitraries.doubles().between(21, 100);
    }

    private double fio2(double value, String unit) {
        NormalizationResult r = normalizer.normalize(new RawMeasurement(
                QuantityKind.FIO2,
                value,
                unit,
                Instant.parse("2026-03-02T08:00:00Z"),
                ValueRole.SETTING,
                null,
                SourceRef.observation("obs-f", "1")));
        assertThat(r).isInstanceOf(NormalizationResult.Accepted.class);
        return ((NormalizationResult.Accepted) r).measurement().value();
    }
}
