package org.lungflag.rules.index;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.within;
import static org.lungflag.rules.measure.QuantityKind.BAROMETRIC_PRESSURE;
import static org.lungflag.rules.measure.QuantityKind.ETCO2;
import static org.lungflag.rules.measure.QuantityKind.FIO2;
import static org.lungflag.rules.measure.QuantityKind.HEMOGLOBIN;
import static org.lungflag.rules.measure.QuantityKind.MEAN_AIRWAY_PRESSURE;
import static org.lungflag.rules.measure.QuantityKind.MINUTE_VENTILATION;
import static org.lungflag.rules.measure.QuantityKind.MIXED_EXPIRED_PCO2;
import static org.lungflag.rules.measure.QuantityKind.PACO2;
import static org.lungflag.rules.measure.QuantityKind.PAO2;
import static org.lungflag.rules.measure.QuantityKind.PEAK_PRESSURE;
import static org.lungflag.rules.measure.QuantityKind.PEEP;
import static org.lungflag.rules.measure.QuantityKind.PLATEAU_PRESSURE;
import static org.lungflag.rules.measure.QuantityKind.RESPIRATORY_RATE;
import static org.lungflag.rules.measure.QuantityKind.SAO2;
import static org.lungflag.rules.measure.QuantityKind.SPO2;
import static org.lungflag.rules.measure.QuantityKind.TIDAL_VOLUME;
import static org.lungflag.rules.measure.QuantityKind.TIDAL_VOLUME_EXPIRED;

import java.time.LocalDate;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Nested;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.EnumSource;
import org.lungflag.rules.fixtures.Scenario;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.patient.Sex;
import org.lungflag.rules.quality.DataQualityReason;

/**
 * IndexCalculator through the real timeline and pairing: which inputs qualify, what is refused and why. Expected
 * values are the clinical-reference worked examples named beside them.
 */
class IndexCalculatorTest {

    private static final PatientFacts MAN = new PatientFacts("pat-demo-1", Sex.MALE, LocalDate.of(1961, 5, 1));
    private static final SiteParameters SITE = SiteParameters.defaults();
    private final IndexCalculator calculator = new IndexCalculator();

    private IndexSet compute(Scenario s) {
        return calculator.compute(s.pair(), MAN, SITE);
    }

    private static NotEvaluable refusal(IndexSet set, IndexCode code) {
        assertThat(set.get(code)).as(code + " should not be evaluable").isInstanceOf(NotEvaluable.class);
        return (NotEvaluable) set.get(code);
    }

    @Nested
    class PfRatio {

        @Test
        void isPaO2OverTheFio2InForce() {
            // Berlin 2012 via clinical-reference T11 [PUB-2]: 80 mmHg / 0.50 = 160.0
            IndexSet set =
                    compute(Scenario.at().arterial(PAO2, 80).setting(FIO2, 0.50).setting(PEEP, 8));
            assertThat(set.value(IndexCode.PF_RATIO)).hasValueCloseTo(160.0, within(1e-9));
            IndexValue v = set.indexValue(IndexCode.PF_RATIO).orElseThrow();
            assertThat(v.formula()).isEqualTo(new FormulaRef("pf-ratio", "1"));
            assertThat(v.inputs()).extracting(Measurement::kind).containsExactly(PAO2, FIO2);
        }

        @ParameterizedTest
        @EnumSource(
                value = SpecimenKind.class,
                names = {"VENOUS", "CAPILLARY", "MIXED_VENOUS"})
        void refusesVenousAndCapillarySamples(SpecimenKind specimen) {
            IndexSet set = compute(
                    Scenario.at().blood(PAO2, 40, specimen).setting(FIO2, 0.5).setting(PEEP, 8));
            NotEvaluable n = refusal(set, IndexCode.PF_RATIO);
            assertThat(n.reason()).isEqualTo(DataQualityReason.SPECIMEN_VENOUS);
            assertThat(n.detail()).contains("PaO2").contains("Observation/obs-1");
            assertThat(refusal(set, IndexCode.OXYGENATION_INDEX).reason()).isEqualTo(DataQualityReason.SPECIMEN_VENOUS);
        }

        @Test
        void refusesASampleThatDoesNotSayItIsArterial() {
            IndexSet set =
                    compute(Scenario.at().blood(PAO2, 80, SpecimenKind.UNKNOWN).setting(FIO2, 0.5));
            assertThat(refusal(set, IndexCode.PF_RATIO).reason()).isEqualTo(DataQualityReason.SPECIMEN_UNSPECIFIED);
        }

        @Test
        void saysFio2IsMissingWhenOnlyPeepIsInForce() {
            IndexSet set = compute(Scenario.at().arterial(PAO2, 80).setting(PEEP, 8));
            NotEvaluable n = refusal(set, IndexCode.PF_RATIO);
            assertThat(n.reason()).isEqualTo(DataQualityReason.MISSING_FIO2);
            assertThat(n.detail()).contains("FiO2").contains("60 min");
        }

        @Test
        void saysNoVentilatorSettingsWhenNeitherFio2NorPeepIsInForce() {
            IndexSet set = compute(Scenario.at().arterial(PAO2, 80));
            assertThat(refusal(set, IndexCode.PF_RATIO).reason()).isEqualTo(DataQualityReason.NO_VENTILATOR_SETTINGS);
        }

        @Test
        void ignoresAnFio2OlderThanTheSettingLookBack() {
            IndexSet set = compute(
                    Scenario.at().arterial(PAO2, 80).setting(FIO2, 0.5, 61).setting(PEEP, 8));
            assertThat(refusal(set, IndexCode.PF_RATIO).reason()).isEqualTo(DataQualityReason.MISSING_FIO2);
        }

        @Test
        void saysPao2IsMissingWithoutABloodGas() {
            IndexSet set = compute(Scenario.at().setting(FIO2, 0.5).setting(PEEP, 8));
            assertThat(refusal(set, IndexCode.PF_RATIO).reason()).isEqualTo(DataQualityReason.MISSING_PAO2);
        }

        @Test
        void altitudeAdjustedRatioNeedsTheSitePressure() {
            Scenario s = Scenario.at().arterial(PAO2, 60).setting(FIO2, 0.40).setting(PEEP, 8);
            NotEvaluable n = refusal(compute(s), IndexCode.PF_RATIO_ALTITUDE_ADJUSTED);
            assertThat(n.reason()).isEqualTo(DataQualityReason.SITE_PRESSURE_NOT_CONFIGURED);

            // Berlin 2012 altitude footnote via clinical-reference ex. 2A [PUB-2]: 150 × 560/760 = 110.5
            IndexSet adjusted = calculator.compute(s.pair(), MAN, SITE.withBarometricPressure(560.0));
            assertThat(adjusted.value(IndexCode.PF_RATIO)).hasValueCloseTo(150.0, within(1e-9));
            assertThat(adjusted.value(IndexCode.PF_RATIO_ALTITUDE_ADJUSTED)).hasValueCloseTo(110.53, within(0.01));
            assertThat(adjusted.indexValue(IndexCode.PF_RATIO_ALTITUDE_ADJUSTED)
                            .orElseThrow()
                            .notes())
                    .anySatisfy(note -> assertThat(note).contains("560"));
        }

        @Test
        void altitudeAdjustedRatioCarriesTheReasonOfTheUnadjustedOne() {
            IndexSet set = calculator.compute(
                    Scenario.at().arterial(PAO2, 60).setting(PEEP, 8).pair(), MAN, SITE.withBarometricPressure(560.0));
            assertThat(refusal(set, IndexCode.PF_RATIO_ALTITUDE_ADJUSTED).reason())
                    .isEqualTo(DataQualityReason.MISSING_FIO2);
        }
    }

    @Nested
    class SfRatioAndOsi {

        @Test
        void sfRatioUsesSpo2InPercent() {
            // Rice 2007 via clinical-reference T18 / ex. 3A [PUB-V]: 92 / 0.40 = 230
            IndexSet set = compute(
                    Scenario.at().measured(SPO2, 0.92).setting(FIO2, 0.40).setting(PEEP, 5));
            assertThat(set.value(IndexCode.SF_RATIO)).hasValueCloseTo(230.0, within(1e-9));
            assertThat(set.indexValue(IndexCode.SF_RATIO).orElseThrow().notes())
                    .anySatisfy(n -> assertThat(n).contains("pulse oximetry"));
        }

        @Test
        void spo2Of97IsStillValid() {
            // global definition 2023 via clinical-reference §3.1 [PUB-V]: valid only when SpO2 ≤ 97 %
            IndexSet set = compute(
                    Scenario.at().measured(SPO2, 0.97).setting(FIO2, 0.40).setting(PEEP, 5));
            assertThat(set.value(IndexCode.SF_RATIO)).hasValueCloseTo(242.5, within(1e-9));
        }

        @Test
        void spo2Above97IsNotEvaluable() {
            // clinical-reference T20 / ex. 3D [PUB-V]: SpO2 98 %, FiO2 0.40 → not applicable, not "mild"
            IndexSet set = compute(Scenario.at()
                    .measured(SPO2, 0.98)
                    .setting(FIO2, 0.40)
                    .setting(PEEP, 5)
                    .measured(MEAN_AIRWAY_PRESSURE, 12));
            assertThat(refusal(set, IndexCode.SF_RATIO).reason()).isEqualTo(DataQualityReason.SPO2_ABOVE_97);
            assertThat(refusal(set, IndexCode.OXYGEN_SATURATION_INDEX).reason())
                    .isEqualTo(DataQualityReason.SPO2_ABOVE_97);
        }

        @Test
        void oxygenationAndSaturationIndicesUseMeanAirwayPressure() {
            // PALICC 2015 / Thomas 2010 via clinical-reference T25/T26 (ex. 4A) [PUB-2]: OI 14.40, OSI 12.00
            IndexSet set = compute(Scenario.at()
                    .arterial(PAO2, 75)
                    .measured(SPO2, 0.90)
                    .setting(FIO2, 0.60)
                    .setting(PEEP, 10)
                    .measured(MEAN_AIRWAY_PRESSURE, 18));
            assertThat(set.value(IndexCode.OXYGENATION_INDEX)).hasValueCloseTo(14.40, within(0.01));
            assertThat(set.value(IndexCode.OXYGEN_SATURATION_INDEX)).hasValueCloseTo(12.00, within(0.01));
        }

        @Test
        void oxygenationIndexNeedsMeanAirwayPressure() {
            IndexSet set =
                    compute(Scenario.at().arterial(PAO2, 75).setting(FIO2, 0.60).setting(PEEP, 10));
            assertThat(refusal(set, IndexCode.OXYGENATION_INDEX).reason())
                    .isEqualTo(DataQualityReason.MISSING_MEAN_AIRWAY_PRESSURE);
        }
    }

    @Nested
    class AlveolarGas {

        private Scenario ex1B() {
            return Scenario.at()
                    .arterial(PAO2, 110)
                    .arterial(PACO2, 45)
                    .setting(FIO2, 0.60)
                    .setting(PEEP, 8);
        }

        @Test
        void usesSeaLevelWithANoteWhenNoPressureIsKnown() {
            // alveolar gas equation via clinical-reference ex. 1B [PUB-2]: PAO2 371.55, A–a 261.55, a/A 0.296
            IndexSet set = compute(ex1B());
            assertThat(set.value(IndexCode.ALVEOLAR_OXYGEN)).hasValueCloseTo(371.55, within(0.01));
            assertThat(set.value(IndexCode.AA_GRADIENT)).hasValueCloseTo(261.55, within(0.01));
            assertThat(set.value(IndexCode.ARTERIAL_ALVEOLAR_RATIO)).hasValueCloseTo(0.296, within(0.0005));
            IndexValue v = set.indexValue(IndexCode.ALVEOLAR_OXYGEN).orElseThrow();
            assertThat(v.formula().id()).isEqualTo("alveolar-gas-simplified");
            assertThat(v.notes()).contains(IndexCalculator.NOTE_PB_ASSUMED);
            assertThat(v.notes())
                    .anySatisfy(n -> assertThat(n).contains("R 0.8").contains("PH2O 47"));
        }

        @Test
        void theFullFormIsASiteChoice() {
            // full alveolar gas equation via clinical-reference ex. 1B [PUB-2]: PAO2 378.30, A–a 268.30
            IndexSet set = calculator.compute(ex1B().pair(), MAN, SITE.withAlveolarGasForm(AlveolarGasForm.FULL));
            assertThat(set.value(IndexCode.ALVEOLAR_OXYGEN)).hasValueCloseTo(378.30, within(0.01));
            assertThat(set.value(IndexCode.AA_GRADIENT)).hasValueCloseTo(268.30, within(0.01));
            assertThat(set.get(IndexCode.AA_GRADIENT).formula().id()).isEqualTo("aa-gradient-full");
        }

        @Test
        void aChartedBarometricPressureWinsOverTheSiteValue() {
            // clinical-reference ex. 1D [PUB-2]: Pb 630, FiO2 0.21, PaCO2 35 → PAO2 78.68, A–a 8.68
            Scenario s = Scenario.at()
                    .arterial(PAO2, 70)
                    .arterial(PACO2, 35)
                    .setting(FIO2, 0.21)
                    .setting(PEEP, 5)
                    .measured(BAROMETRIC_PRESSURE, 630);
            IndexSet set = calculator.compute(s.pair(), MAN, SITE.withBarometricPressure(700.0));
            assertThat(set.value(IndexCode.ALVEOLAR_OXYGEN)).hasValueCloseTo(78.68, within(0.01));
            assertThat(set.value(IndexCode.AA_GRADIENT)).hasValueCloseTo(8.68, within(0.01));
            assertThat(set.indexValue(IndexCode.ALVEOLAR_OXYGEN).orElseThrow().inputs())
                    .extracting(Measurement::kind)
                    .contains(BAROMETRIC_PRESSURE);
        }

        @Test
        void theSitePressureIsUsedWhenNoneIsCharted() {
            // clinical-reference ex. 1D [PUB-2] with Pb 630 from the site
            Scenario s = Scenario.at()
                    .arterial(PAO2, 70)
                    .arterial(PACO2, 35)
                    .setting(FIO2, 0.21)
                    .setting(PEEP, 5);
            IndexSet set = calculator.compute(s.pair(), MAN, SITE.withBarometricPressure(630.0));
            assertThat(set.value(IndexCode.ALVEOLAR_OXYGEN)).hasValueCloseTo(78.68, within(0.01));
            assertThat(set.indexValue(IndexCode.ALVEOLAR_OXYGEN).orElseThrow().notes())
                    .anySatisfy(n -> assertThat(n).contains("site value"));
        }

        @Test
        void needsAnArterialPaco2() {
            IndexSet set = compute(Scenario.at()
                    .arterial(PAO2, 110)
                    .blood(PACO2, 50, SpecimenKind.VENOUS)
                    .setting(FIO2, 0.6)
                    .setting(PEEP, 8));
            assertThat(refusal(set, IndexCode.ALVEOLAR_OXYGEN).reason()).isEqualTo(DataQualityReason.SPECIMEN_VENOUS);
            assertThat(refusal(set, IndexCode.AA_GRADIENT).reason()).isEqualTo(DataQualityReason.SPECIMEN_VENOUS);
        }

        @Test
        void aNonPositiveAlveolarPressureIsOutOfRange() {
            IndexSet set = compute(
                    Scenario.at().arterial(PAO2, 40).arterial(PACO2, 140).setting(FIO2, 0.21));
            assertThat(refusal(set, IndexCode.ARTERIAL_ALVEOLAR_RATIO).reason())
                    .isEqualTo(DataQualityReason.OUT_OF_FORMULA_RANGE);
        }
    }

    @Nested
    class BodyWeightAndVolumes {

        @Test
        void predictedBodyWeightNeedsHeightAndSex() {
            IndexSet noHeight = compute(Scenario.at());
            assertThat(refusal(noHeight, IndexCode.PREDICTED_BODY_WEIGHT).reason())
                    .isEqualTo(DataQualityReason.MISSING_HEIGHT);

            IndexSet noSex = calculator.compute(
                    Scenario.at().height(175).measured(TIDAL_VOLUME, 420).pair(),
                    new PatientFacts("pat-demo-2", Sex.UNKNOWN, null),
                    SITE);
            NotEvaluable n = refusal(noSex, IndexCode.PREDICTED_BODY_WEIGHT);
            assertThat(n.reason()).isEqualTo(DataQualityReason.MISSING_SEX);
            // the detail shows the range, as clinical-reference §6.1 suggests: 66.0 (female) to 70.566 (male)
            assertThat(n.detail()).contains("66.066").contains("70.566");
            assertThat(refusal(noSex, IndexCode.TIDAL_VOLUME_PER_PBW).reason())
                    .isEqualTo(DataQualityReason.MISSING_SEX);
        }

        @Test
        void tidalVolumePrefersExpiredThenDeliveredThenSet() {
            // ARDSNet via clinical-reference T33/T37 [PUB-2]: male 175 cm → 70.566 kg; 420 mL → 5.95 mL/kg
            Scenario s = Scenario.at()
                    .height(175)
                    .setting(TIDAL_VOLUME, 450)
                    .measured(TIDAL_VOLUME, 430)
                    .measured(TIDAL_VOLUME_EXPIRED, 420);
            IndexValue v = compute(s).indexValue(IndexCode.TIDAL_VOLUME_PER_PBW).orElseThrow();
            assertThat(v.value()).isCloseTo(5.95, within(0.005));
            assertThat(v.notes()).contains(IndexCalculator.NOTE_VT_EXPIRED);

            IndexValue delivered = compute(
                            Scenario.at().height(175).setting(TIDAL_VOLUME, 450).measured(TIDAL_VOLUME, 430))
                    .indexValue(IndexCode.TIDAL_VOLUME_PER_PBW)
                    .orElseThrow();
            assertThat(delivered.value()).isCloseTo(430 / 70.566, within(1e-9));
            assertThat(delivered.notes()).contains(IndexCalculator.NOTE_VT_DELIVERED);

            IndexValue set = compute(Scenario.at().height(175).setting(TIDAL_VOLUME, 450))
                    .indexValue(IndexCode.TIDAL_VOLUME_PER_PBW)
                    .orElseThrow();
            assertThat(set.value()).isCloseTo(450 / 70.566, within(1e-9));
            assertThat(set.notes()).contains(IndexCalculator.NOTE_VT_SET);
        }

        @Test
        void shortAndYoungPatientsAreNotedNotClamped() {
            // ARDSNet cm form via clinical-reference T36 [PUB-2]: female 140 cm → 34.216 kg, no clamping
            PatientFacts girl = new PatientFacts("pat-demo-3", Sex.FEMALE, LocalDate.of(2014, 1, 1));
            IndexValue v = calculator
                    .compute(Scenario.at().height(140).pair(), girl, SITE)
                    .indexValue(IndexCode.PREDICTED_BODY_WEIGHT)
                    .orElseThrow();
            assertThat(v.value()).isCloseTo(34.216, within(0.0005));
            assertThat(v.notes()).contains(IndexCalculator.NOTE_PBW_NO_CLAMP, IndexCalculator.NOTE_PBW_MINOR);
            // clinical-reference §6.1: heights below about 140 cm are outside the validated range
            IndexValue shorter = calculator
                    .compute(Scenario.at().height(135).pair(), girl, SITE)
                    .indexValue(IndexCode.PREDICTED_BODY_WEIGHT)
                    .orElseThrow();
            assertThat(shorter.notes()).contains(IndexCalculator.NOTE_PBW_SHORT);
        }
    }

    @Nested
    class VentilationAndDeadSpace {

        @Test
        void ventilatoryRatioFromMeasuredMinuteVentilation() {
            // Sinha 2009 via clinical-reference T29 / ex. 5C [PUB-V]: 8.4 L/min, PaCO2 55, PBW 70.566 → 1.746
            IndexSet set = compute(Scenario.at().height(175).arterial(PACO2, 55).measured(MINUTE_VENTILATION, 8.4));
            IndexValue v = set.indexValue(IndexCode.VENTILATORY_RATIO).orElseThrow();
            assertThat(v.value()).isCloseTo(1.746, within(0.0005));
            assertThat(v.notes()).isEmpty();
        }

        @Test
        void ventilatoryRatioDerivesMinuteVentilationFromTidalVolumeAndRateWithANote() {
            // Sinha 2009 via clinical-reference ex. 5C [PUB-V]: VT 420 × RR 20 = 8400 mL/min → 1.746
            IndexSet set = compute(Scenario.at()
                    .height(175)
                    .arterial(PACO2, 55)
                    .measured(TIDAL_VOLUME_EXPIRED, 420)
                    .measured(RESPIRATORY_RATE, 20));
            IndexValue v = set.indexValue(IndexCode.VENTILATORY_RATIO).orElseThrow();
            assertThat(v.value()).isCloseTo(1.746, within(0.0005));
            assertThat(v.notes()).contains(IndexCalculator.NOTE_VE_DERIVED);
        }

        @Test
        void ventilatoryRatioDoesNotUseSetValues() {
            IndexSet set = compute(Scenario.at()
                    .height(175)
                    .arterial(PACO2, 55)
                    .setting(TIDAL_VOLUME, 420)
                    .setting(RESPIRATORY_RATE, 20));
            assertThat(refusal(set, IndexCode.VENTILATORY_RATIO).reason())
                    .isEqualTo(DataQualityReason.MISSING_MINUTE_VENTILATION);
        }

        @Test
        void deadSpaceFractionUsesMixedExpiredPco2() {
            // Bohr–Enghoff via clinical-reference T28 [PUB-V method]: (55 − 22)/55 = 0.600
            IndexSet set = compute(Scenario.at().arterial(PACO2, 55).measured(MIXED_EXPIRED_PCO2, 22));
            assertThat(set.value(IndexCode.DEAD_SPACE_FRACTION)).hasValueCloseTo(0.600, within(0.0005));
        }

        @Test
        void deadSpaceFractionNeverFallsBackToEndTidalPco2() {
            // clinical-reference trap 13: (PaCO2 − EtCO2)/PaCO2 is not VD/VT
            IndexSet set = compute(Scenario.at().arterial(PACO2, 55).measured(ETCO2, 40));
            assertThat(refusal(set, IndexCode.DEAD_SPACE_FRACTION).reason())
                    .isEqualTo(DataQualityReason.MISSING_MIXED_EXPIRED_PCO2);
            // clinical-reference §5.5 [CP]: but the gradient is there, 55 − 40 = 15 mmHg
            assertThat(set.value(IndexCode.PACO2_ETCO2_GRADIENT)).hasValueCloseTo(15.0, within(1e-9));
        }

        @Test
        void deadSpaceFractionRefusesAMixedExpiredPco2AbovePaco2() {
            IndexSet set = compute(Scenario.at().arterial(PACO2, 40).measured(MIXED_EXPIRED_PCO2, 45));
            assertThat(refusal(set, IndexCode.DEAD_SPACE_FRACTION).reason())
                    .isEqualTo(DataQualityReason.OUT_OF_FORMULA_RANGE);
        }
    }

    @Nested
    class Mechanics {

        private Scenario ex6A() {
            // clinical-reference ex. 6A: VT 420 mL, RR 20, PEEP 10, Pplat 26, Ppeak 32
            return Scenario.at()
                    .measured(TIDAL_VOLUME_EXPIRED, 420)
                    .measured(RESPIRATORY_RATE, 20)
                    .setting(PEEP, 10)
                    .measured(PLATEAU_PRESSURE, 26)
                    .measured(PEAK_PRESSURE, 32);
        }

        @Test
        void drivingPressureComplianceAndMechanicalPowerOfTheWorkedExample() {
            IndexSet set = compute(ex6A());
            // Amato 2015 via clinical-reference T38 [PUB-V]: ΔP 16; Crs 26.25 [CP]
            assertThat(set.value(IndexCode.DRIVING_PRESSURE)).hasValueCloseTo(16.0, within(1e-9));
            assertThat(set.value(IndexCode.STATIC_COMPLIANCE)).hasValueCloseTo(26.25, within(0.005));
            // Gattinoni 2016 surrogate via clinical-reference T40 [PUB-2/MEM]: 19.757 J/min
            IndexValue mp = set.indexValue(IndexCode.MECHANICAL_POWER).orElseThrow();
            assertThat(mp.value()).isCloseTo(19.757, within(0.001));
            assertThat(mp.formula().id()).isEqualTo("mechanical-power-surrogate-vc");
            assertThat(mp.notes()).contains(IndexCalculator.NOTE_MP_VALIDITY, IndexCalculator.NOTE_VT_EXPIRED);
            assertThat(set.indexValue(IndexCode.DRIVING_PRESSURE).orElseThrow().notes())
                    .contains(IndexCalculator.NOTE_PEEP_SET);
        }

        @Test
        void mechanicalPowerFallsBackToTheSetRateWithANote() {
            IndexSet set = compute(Scenario.at()
                    .measured(TIDAL_VOLUME_EXPIRED, 420)
                    .setting(RESPIRATORY_RATE, 20)
                    .setting(PEEP, 10)
                    .measured(PLATEAU_PRESSURE, 26)
                    .measured(PEAK_PRESSURE, 32));
            IndexValue mp = set.indexValue(IndexCode.MECHANICAL_POWER).orElseThrow();
            assertThat(mp.value()).isCloseTo(19.757, within(0.001));
            assertThat(mp.notes()).contains(IndexCalculator.NOTE_RR_SET);
        }

        @Test
        void plateauBelowPeepIsRefused() {
            IndexSet set = compute(Scenario.at()
                    .setting(PEEP, 12)
                    .measured(PLATEAU_PRESSURE, 10)
                    .measured(TIDAL_VOLUME, 400));
            assertThat(refusal(set, IndexCode.DRIVING_PRESSURE).reason())
                    .isEqualTo(DataQualityReason.PLATEAU_BELOW_PEEP);
            assertThat(refusal(set, IndexCode.STATIC_COMPLIANCE).reason())
                    .isEqualTo(DataQualityReason.PLATEAU_BELOW_PEEP);
        }

        @Test
        void complianceIsNotEvaluableAtZeroDrivingPressure() {
            IndexSet set = compute(Scenario.at()
                    .setting(PEEP, 12)
                    .measured(PLATEAU_PRESSURE, 12)
                    .measured(TIDAL_VOLUME, 400));
            assertThat(set.value(IndexCode.DRIVING_PRESSURE)).hasValueCloseTo(0.0, within(1e-12));
            assertThat(refusal(set, IndexCode.STATIC_COMPLIANCE).reason())
                    .isEqualTo(DataQualityReason.OUT_OF_FORMULA_RANGE);
        }

        @Test
        void peakBelowPlateauIsRefused() {
            IndexSet set = compute(Scenario.at()
                    .measured(TIDAL_VOLUME_EXPIRED, 420)
                    .measured(RESPIRATORY_RATE, 20)
                    .setting(PEEP, 10)
                    .measured(PLATEAU_PRESSURE, 26)
                    .measured(PEAK_PRESSURE, 24));
            assertThat(refusal(set, IndexCode.MECHANICAL_POWER).reason())
                    .isEqualTo(DataQualityReason.PEAK_BELOW_PLATEAU);
        }

        @Test
        void missingPlateauIsNamed() {
            IndexSet set = compute(Scenario.at().setting(PEEP, 10));
            assertThat(refusal(set, IndexCode.DRIVING_PRESSURE).reason())
                    .isEqualTo(DataQualityReason.MISSING_PLATEAU_PRESSURE);
        }
    }

    @Nested
    class OxygenContent {

        @Test
        void usesTheSiteHufnerConstantAndShowsIt() {
            // clinical-reference T42 / ex. 7A [PUB-2]: Hb 12, SaO2 0.92, PaO2 65 → 14.99 (k 1.34), 15.54 (k 1.39)
            Scenario s = Scenario.at().arterial(PAO2, 65).arterial(SAO2, 0.92).arterial(HEMOGLOBIN, 12);
            IndexValue v =
                    compute(s).indexValue(IndexCode.ARTERIAL_OXYGEN_CONTENT).orElseThrow();
            assertThat(v.value()).isCloseTo(14.99, within(0.005));
            assertThat(v.notes()).anySatisfy(n -> assertThat(n).contains("k = 1.34"));
            IndexSet k139 = calculator.compute(s.pair(), MAN, SITE.withHufnerConstant(1.39));
            assertThat(k139.value(IndexCode.ARTERIAL_OXYGEN_CONTENT)).hasValueCloseTo(15.54, within(0.005));
        }

        @Test
        void needsAnArterialSaturation() {
            IndexSet set = compute(Scenario.at()
                    .arterial(PAO2, 65)
                    .blood(SAO2, 0.70, SpecimenKind.VENOUS)
                    .arterial(HEMOGLOBIN, 12));
            assertThat(refusal(set, IndexCode.ARTERIAL_OXYGEN_CONTENT).reason())
                    .isEqualTo(DataQualityReason.SPECIMEN_VENOUS);
            IndexSet none = compute(Scenario.at().arterial(PAO2, 65).arterial(HEMOGLOBIN, 12));
            assertThat(refusal(none, IndexCode.ARTERIAL_OXYGEN_CONTENT).reason())
                    .isEqualTo(DataQualityReason.MISSING_SAO2);
        }
    }

    @Test
    void inputsThatBypassedTheNormalizerGiveAReasonNotACrash() {
        // an FiO2 of 0 never passes MeasurementNormalizer, but the calculator must not throw on it either
        IndexSet set =
                compute(Scenario.at().arterial(PAO2, 80).setting(FIO2, 0.0).setting(PEEP, 5));
        NotEvaluable n = refusal(set, IndexCode.PF_RATIO);
        assertThat(n.reason()).isEqualTo(DataQualityReason.OUT_OF_FORMULA_RANGE);
        assertThat(n.detail()).contains("FiO2 0");
    }

    @Test
    void anEmptyTimelineGivesAReasonForEveryIndexAndNoNumber() {
        IndexSet set = compute(Scenario.at());
        List<IndexCode> codes = new ArrayList<>();
        for (IndexResult r : set) {
            codes.add(r.code());
            assertThat(r).isInstanceOf(NotEvaluable.class);
            assertThat(((NotEvaluable) r).detail()).isNotBlank();
        }
        assertThat(codes).containsExactly(IndexCode.values());
    }

    @Test
    void everyResultCarriesTheFormulaOfItsRegistryDefinition() {
        IndexSet set =
                compute(Scenario.at().arterial(PAO2, 80).arterial(PACO2, 40).setting(FIO2, 0.5));
        for (IndexResult r : set) {
            assertThat(IndexDefinitions.byFormula(r.formula()))
                    .as(r.code().code())
                    .hasValueSatisfying(d -> assertThat(d.code()).isEqualTo(r.code()));
        }
    }
}
