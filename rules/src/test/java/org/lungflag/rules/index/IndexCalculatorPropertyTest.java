package org.lungflag.rules.index;

import static org.assertj.core.api.Assertions.assertThat;

import java.time.Instant;
import java.time.LocalDate;
import java.util.Arrays;
import java.util.List;
import net.jqwik.api.Arbitraries;
import net.jqwik.api.Arbitrary;
import net.jqwik.api.Combinators;
import net.jqwik.api.ForAll;
import net.jqwik.api.Property;
import net.jqwik.api.Provide;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.OriginalQuantity;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.ValueRole;
import org.lungflag.rules.pairing.Pairing;
import org.lungflag.rules.pairing.PairingSettings;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.patient.Sex;
import org.lungflag.rules.timeline.PatientTimeline;

/**
 * Whatever the inputs (also ones that never passed the normalizer: zero, negative, huge), the calculator answers
 * for every index, never throws, and every number it gives is finite.
 */
class IndexCalculatorPropertyTest {

    private static final Instant ANCHOR = Instant.parse("2026-03-02T08:00:00Z");

    record Input(QuantityKind kind, double value, ValueRole role, SpecimenKind specimen) {}

    @Provide
    Arbitrary<List<Input>> inputs() {
        Arbitrary<QuantityKind> kinds = Arbitraries.of(Arrays.stream(QuantityKind.values())
                .filter(k -> !k.isCategorical())
                .toList());
        Arbitrary<Double> values = Arbitraries.oneOf(
                Arbitraries.doubles().between(-10, 1000), Arbitraries.of(0.0, -0.0, 1e-300, 1e300, 0.21, 0.97, 0.98));
        return Combinators.combine(
                        kinds, values, Arbitraries.of(ValueRole.values()), Arbitraries.of(SpecimenKind.values()))
                .as(Input::new)
                .list()
                .ofMaxSize(30);
    }

    @Property(tries = 1000)
    void answersEveryIndexWithAFiniteNumberOrAReason(
            @ForAll("inputs") List<Input> inputs, @ForAll Sex sex, @ForAll boolean sitePressure) {
        PatientTimeline timeline = new PatientTimeline("pat-demo-1");
        int n = 0;
        for (Input in : inputs) {
            timeline.add(new Measurement(
                    in.kind(),
                    in.value(),
                    ANCHOR.minusSeconds(60L * (n % 20)),
                    in.role(),
                    in.specimen(),
                    SourceRef.observation("p" + n++, "1"),
                    new OriginalQuantity(in.value(), in.kind().canonicalUnit()),
                    List.of()));
        }
        SiteParameters site =
                sitePressure ? SiteParameters.defaults().withBarometricPressure(600.0) : SiteParameters.defaults();
        IndexSet set = new IndexCalculator()
                .compute(
                        new Pairing(PairingSettings.defaults()).at(timeline, ANCHOR),
                        new PatientFacts("pat-demo-1", sex, LocalDate.of(1980, 1, 1)),
                        site);
        assertThat(set.size()).isEqualTo(IndexCode.values().length);
        for (IndexResult r : set) {
            if (r instanceof IndexValue v) {
                assertThat(Double.isFinite(v.value())).as(r.toString()).isTrue();
                assertThat(v.inputs()).doesNotContainNull();
            } else {
                assertThat(((NotEvaluable) r).detail()).isNotBlank();
            }
        }
    }
}
