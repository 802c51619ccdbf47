package org.lungflag.rules.index;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.within;

import java.time.Duration;
import java.time.Instant;
import java.time.LocalDate;
import org.junit.jupiter.api.Test;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.ValueRole;
import org.lungflag.rules.pairing.Pairing;
import org.lungflag.rules.pairing.PairingSettings;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.patient.Sex;
import org.lungflag.rules.quality.DataQualityReason;
import org.lungflag.rules.timeline.PatientTimeline;
import org.lungflag.rules.units.MeasurementNormalizer;
import org.lungflag.rules.units.NormalizationResult;
import org.lungflag.rules.units.RawMeasurement;

/**
 * Worked examples whose inputs are charted in non-canonical units, run end to end: normalizer (UCUM), timeline,
 * pairing, calculator. The expected values are the clinical-reference ones named beside each.
 */
class WorkedExamplesFromChartedUnitsTest {

    private static final Instant ANCHOR = Instant.parse("2026-03-02T08:00:00Z");
    private final MeasurementNormalizer normalizer = new MeasurementNormalizer();
    private final PatientTimeline timeline = new PatientTimeline("pat-demo-1");
    private int next;

    private WorkedExamplesFromChartedUnitsTest chart(
            QuantityKind kind, double value, String unit, ValueRole role, SpecimenKind specimen) {
        Instant at = kind == QuantityKind.BODY_HEIGHT ? ANCHOR.minus(Duration.ofDays(1)) : ANCHOR.minusSeconds(120);
        NormalizationResult r = normalizer.normalize(
                new RawMeasurement(kind, value, unit, at, role, specimen, SourceRef.observation("c" + next++, "1")));
        assertThat(r).isInstanceOf(NormalizationResult.Accepted.class);
        timeline.add(((NormalizationResult.Accepted) r).measurement());
        return this;
    }

    private IndexSet compute(Sex sex) {
        return new IndexCalculator()
                .compute(
                        new Pairing(PairingSettings.defaults()).at(timeline, ANCHOR),
                        new PatientFacts("pat-demo-1", sex, LocalDate.of(1966, 4, 2)),
                        SiteParameters.defaults());
    }

    @Test
    void pfRatioFromKilopascalsAndPercent() {
        // clinical-reference T12 / ex. 2D: 10.7 kPa (= 80.257 mmHg under UCUM), FiO2 50 % → 160.51
        chart(QuantityKind.PAO2, 10.7, "kPa", ValueRole.MEASUREMENT, SpecimenKind.ARTERIAL);
        chart(QuantityKind.FIO2, 50, "%", ValueRole.SETTING, null);
        assertThat(compute(Sex.MALE).value(IndexCode.PF_RATIO)).hasValueCloseTo(160.51, within(0.01));
    }

    @Test
    void pfRatioFromEightKilopascals() {
        // clinical-reference ex. 2H: 8.0 kPa = 60.005 mmHg, FiO2 0.40 → 150.01
        chart(QuantityKind.PAO2, 8.0, "kPa", ValueRole.MEASUREMENT, SpecimenKind.ARTERIAL);
        chart(QuantityKind.FIO2, 0.40, "1", ValueRole.SETTING, null);
        assertThat(compute(Sex.MALE).value(IndexCode.PF_RATIO)).hasValueCloseTo(150.01, within(0.01));
    }

    @Test
    void sfRatioFromPercentFio2() {
        // Rice 2007 via clinical-reference T21 / ex. 3C [PUB-V]: SpO2 94 %, FiO2 35 % → 268.57
        chart(QuantityKind.SPO2, 94, "%", ValueRole.MEASUREMENT, null);
        chart(QuantityKind.FIO2, 35, "%", ValueRole.SETTING, null);
        assertThat(compute(Sex.MALE).value(IndexCode.SF_RATIO)).hasValueCloseTo(268.57, within(0.01));
    }

    @Test
    void aRepairedFio2IsUsedAndCarriesItsRepair() {
        // clinical-reference §9.2 / T50: 0.5 charted with '%' is read as 0.5 with an audited repair
        chart(QuantityKind.PAO2, 80, "mm[Hg]", ValueRole.MEASUREMENT, SpecimenKind.ARTERIAL);
        chart(QuantityKind.FIO2, 0.5, "%", ValueRole.SETTING, null);
        IndexValue pf = compute(Sex.MALE).indexValue(IndexCode.PF_RATIO).orElseThrow();
        assertThat(pf.value()).isCloseTo(160.0, within(1e-9));
        assertThat(pf.inputs().get(1).repairs())
                .extracting(r -> r.code())
                .containsExactly(DataQualityReason.FIO2_FRACTION_CHARTED_AS_PERCENT.code());
    }

    @Test
    void ventilatoryRatioWithPaco2InKilopascals() {
        // Sinha 2009 via clinical-reference ex. 5C [PUB-V]: 7.33 kPa, VE 8400 mL/min, male 175 cm → 1.745
        chart(QuantityKind.PACO2, 7.33, "kPa", ValueRole.MEASUREMENT, SpecimenKind.ARTERIAL);
        chart(QuantityKind.MINUTE_VENTILATION, 8400, "mL/min", ValueRole.MEASUREMENT, null);
        chart(QuantityKind.BODY_HEIGHT, 175, "cm", ValueRole.MEASUREMENT, null);
        assertThat(compute(Sex.MALE).value(IndexCode.VENTILATORY_RATIO)).hasValueCloseTo(1.745, within(0.001));
    }

    @Test
    void predictedBodyWeightFromInchesUsesTheCmForm() {
        // ARDSNet via clinical-reference §6.1 table [PUB-2]: 70 in = 177.8 cm → 73.114 kg by the cm form that
        // Lungflag uses. T35's 73.000 is the inch form (50 + 2.3 × 10), which Lungflag does not use (trap 9).
        chart(QuantityKind.BODY_HEIGHT, 70, "[in_i]", ValueRole.MEASUREMENT, null);
        assertThat(compute(Sex.MALE).value(IndexCode.PREDICTED_BODY_WEIGHT)).hasValueCloseTo(73.114, within(0.0005));
    }

    @Test
    void drivingPressureFromMillibar() {
        // Amato 2015 ΔP [PUB-V] with pressures charted in mbar (UCUM: 1 mbar = 1.019716 cmH2O, clinical-reference §9.1)
        chart(QuantityKind.PEEP, 10, "mbar", ValueRole.SETTING, null);
        chart(QuantityKind.PLATEAU_PRESSURE, 26, "mbar", ValueRole.MEASUREMENT, null);
        assertThat(compute(Sex.MALE).value(IndexCode.DRIVING_PRESSURE)).hasValueCloseTo(16 * 1.019716, within(1e-5));
    }
}
