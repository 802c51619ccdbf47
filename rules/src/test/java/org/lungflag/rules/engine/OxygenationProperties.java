package org.lungflag.rules.engine;

import static org.assertj.core.api.Assertions.assertThat;

import java.math.BigDecimal;
import java.time.Instant;
import java.util.List;
import net.jqwik.api.Assume;
import net.jqwik.api.ForAll;
import net.jqwik.api.Property;
import net.jqwik.api.constraints.DoubleRange;
import net.jqwik.api.constraints.IntRange;
import org.lungflag.rules.catalog.ParameterOverrides;
import org.lungflag.rules.catalog.RuleCatalog;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.SupportMode;
import org.lungflag.rules.measure.ValueRole;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.patient.Sex;
import org.lungflag.rules.timeline.PatientTimeline;
import org.lungflag.rules.units.MeasurementNormalizer;
import org.lungflag.rules.units.NormalizationResult;
import org.lungflag.rules.units.RawMeasurement;

/** Properties of the hypoxemia rule that any correct implementation of the published bands must have. */
class OxygenationProperties {

    static final RuleEngine ENGINE = RuleEngine.create(RuleCatalog.loadDefault(), ParameterOverrides.none());
    static final PatientFacts PATIENT = new PatientFacts("pat-oxy", Sex.MALE, java.time.LocalDate.parse("1970-01-01"));
    static final MeasurementNormalizer NORMALIZER = new MeasurementNormalizer();
    static final Instant SETTINGS = Facts.at(2, 40);
    static final Instant GAS = Facts.at(3, 10);

    /** The hypoxemia tier rank at one blood gas: -1 when no band is met, -2 when not evaluable. */
    static int rank(List<Measurement> facts) {
        PatientTimeline t = new PatientTimeline(PATIENT.patientId());
        t.add(new org.lungflag.rules.measure.SupportState(
                SupportMode.INVASIVE_VENTILATION, null, Facts.T0, SourceRef.observation("sup", "1")));
        facts.forEach(t::add);
        StepResult r = ENGINE.step(null, t, PATIENT, GAS);
        RuleEvaluation e = r.evaluations().stream()
                .filter(x -> x.ruleId().equals("hypoxemia"))
                .findFirst()
                .orElseThrow();
        if (e.outcome() == Outcome.NOT_EVALUABLE) {
            return -2;
        }
        return e.tier() == null
                ? -1
                : ENGINE.catalog()
                        .rule("hypoxemia")
                        .orElseThrow()
                        .tier(e.tier())
                        .orElseThrow()
                        .rank();
    }

    static Measurement canonical(QuantityKind kind, double value, Instant at, ValueRole role, String id) {
        SpecimenKind specimen = kind.isBloodSample() ? SpecimenKind.ARTERIAL : SpecimenKind.NOT_APPLICABLE;
        return normalized(new RawMeasurement(
                kind, value, kind.canonicalUnit(), at, role, specimen, SourceRef.observation(id, "1")));
    }

    static Measurement normalized(RawMeasurement raw) {
        NormalizationResult r = NORMALIZER.normalize(raw);
        assertThat(r).as("accepted: %s", raw).isInstanceOf(NormalizationResult.Accepted.class);
        return ((NormalizationResult.Accepted) r).measurement();
    }

    @Property(tries = 300)
    void a_lower_pf_ratio_never_gives_a_milder_band(
            @ForAll @DoubleRange(min = 30, max = 400) double pao2a,
            @ForAll @DoubleRange(min = 30, max = 400) double pao2b,
            @ForAll @IntRange(min = 21, max = 100) int fio2Percent,
            @ForAll @IntRange(min = 5, max = 20) int peep) {
        double low = Math.min(pao2a, pao2b);
        double high = Math.max(pao2a, pao2b);
        double fio2 = fio2Percent / 100.0;
        int lowRank = rank(List.of(
                canonical(QuantityKind.FIO2, fio2, SETTINGS, ValueRole.SETTING, "f"),
                canonical(QuantityKind.PEEP, peep, SETTINGS, ValueRole.SETTING, "p"),
                canonical(QuantityKind.PAO2, low, GAS, ValueRole.MEASUREMENT, "g")));
        int highRank = rank(List.of(
                canonical(QuantityKind.FIO2, fio2, SETTINGS, ValueRole.SETTING, "f"),
                canonical(QuantityKind.PEEP, peep, SETTINGS, ValueRole.SETTING, "p"),
                canonical(QuantityKind.PAO2, high, GAS, ValueRole.MEASUREMENT, "g")));
        assertThat(lowRank).as("P/F %s vs %s", low / fio2, high / fio2).isGreaterThanOrEqualTo(highRank);
    }

    @Property(tries = 300)
    void kpa_and_mmhg_and_percent_and_fraction_give_the_same_band(
            @ForAll @DoubleRange(min = 4, max = 50) double pao2Kpa,
            @ForAll @IntRange(min = 21, max = 100) int fio2Percent) {
        // the same quantities charted two ways; the mmHg value is what UCUM makes of the kPa one
        double mmHg =
                new BigDecimal(pao2Kpa).multiply(new BigDecimal("7.500616827")).doubleValue();
        double pf = mmHg / (fio2Percent / 100.0);
        for (double edge : new double[] {100, 200, 300}) {
            Assume.that(Math.abs(pf - edge) > 0.01); // exactly at a band edge the two conversions may differ by 1 ulp
        }
        int asKpaAndPercent = rank(List.of(
                normalized(raw(QuantityKind.FIO2, fio2Percent, "%", SETTINGS, ValueRole.SETTING, "f")),
                canonical(QuantityKind.PEEP, 8, SETTINGS, ValueRole.SETTING, "p"),
                normalized(raw(QuantityKind.PAO2, pao2Kpa, "kPa", GAS, ValueRole.MEASUREMENT, "g"))));
        int asMmHgAndFraction = rank(List.of(
                normalized(raw(QuantityKind.FIO2, fio2Percent / 100.0, "1", SETTINGS, ValueRole.SETTING, "f")),
                canonical(QuantityKind.PEEP, 8, SETTINGS, ValueRole.SETTING, "p"),
                normalized(raw(QuantityKind.PAO2, mmHg, "mm[Hg]", GAS, ValueRole.MEASUREMENT, "g"))));
        assertThat(asKpaAndPercent).as("P/F %s", pf).isEqualTo(asMmHgAndFraction);
    }

    static RawMeasurement raw(QuantityKind kind, double value, String unit, Instant at, ValueRole role, String id) {
        SpecimenKind specimen = kind.isBloodSample() ? SpecimenKind.ARTERIAL : SpecimenKind.NOT_APPLICABLE;
        return new RawMeasurement(kind, value, unit, at, role, specimen, SourceRef.observation(id, "1"));
    }
}
