package org.lungflag.rules.index;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;
import static org.assertj.core.api.Assertions.within;

import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.CsvSource;
import org.lungflag.rules.patient.Sex;

/**
 * Each formula against the worked values of clinical-reference §1–§7 and the test vectors of §12. The last column
 * names where the expected value comes from, with the sheet's source tag. Tolerances follow §0 (±0.01 for ratios,
 * ±0.1 mmHg for pressures), tightened where the sheet gives more decimals.
 */
class FormulasTest {

    @ParameterizedTest(name = "{4}: P/F({0}, {1}) = {2}")
    @CsvSource(delimiter = '|', textBlock = """
            90  | 0.21 | 428.57 | 0.01 | Berlin 2012 P/F via clinical-reference ex. 1A [PUB-2]
            110 | 0.60 | 183.33 | 0.01 | Berlin 2012 P/F via clinical-reference ex. 1B [PUB-2]
            70  | 0.21 | 333.33 | 0.01 | Berlin 2012 P/F via clinical-reference ex. 1D [PUB-2]
            80  | 0.50 | 160.0  | 0.01 | Berlin 2012 via clinical-reference T11 / ex. 2C [PUB-2]
            60  | 0.30 | 200.0  | 0.01 | Berlin 2012 via clinical-reference ex. 2E (moderate boundary) [PUB-2]
            90  | 0.30 | 300.0  | 0.01 | Berlin 2012 via clinical-reference ex. 2F (mild boundary) [PUB-2]
            55  | 0.55 | 100.0  | 0.01 | Berlin 2012 via clinical-reference ex. 2G (severe boundary) [PUB-2]
            """)
    void pfRatioMatchesTheWorkedExamples(double pao2, double fio2, double expected, double tolerance, String source) {
        assertThat(Formulas.pfRatio(pao2, fio2)).as(source).isCloseTo(expected, within(tolerance));
    }

    @Test
    void pfRatioAtTheBerlinBoundariesIsExactInFullPrecision() {
        // clinical-reference §0: compare on the full-precision result; 60/0.30 must not drift above 200.
        assertThat(Formulas.pfRatio(60, 0.30)).isCloseTo(200.0, within(1e-9));
        assertThat(Formulas.pfRatio(90, 0.30)).isCloseTo(300.0, within(1e-9));
    }

    @ParameterizedTest(name = "{3}: {0} × {1}/760 = {2}")
    @CsvSource(delimiter = '|', textBlock = """
            150 | 560   | 110.53 | Berlin 2012 altitude footnote via clinical-reference T17 / ex. 2A [PUB-2]
            150 | 553.2 | 109.18 | Berlin 2012 altitude footnote via clinical-reference ex. 2B [PUB-2]
            150 | 760   | 150.0  | Berlin 2012 altitude footnote: no change at sea level [PUB-2]
            """)
    void altitudeAdjustmentScalesByPbOver760(double pf, double pb, double expected, String source) {
        assertThat(Formulas.altitudeAdjustedPfRatio(pf, pb)).as(source).isCloseTo(expected, within(0.01));
    }

    @ParameterizedTest(name = "{3}: S/F({0} %, {1}) = {2}")
    @CsvSource(delimiter = '|', textBlock = """
            92 | 0.40 | 230.0  | Rice 2007 S/F via clinical-reference T18 / ex. 3A [PUB-V]
            88 | 0.60 | 146.67 | Rice 2007 S/F via clinical-reference T19 / ex. 3B [PUB-V]
            94 | 0.35 | 268.57 | Rice 2007 S/F via clinical-reference T21 / ex. 3C [PUB-V]
            """)
    void sfRatioUsesSpo2InPercent(double spo2Percent, double fio2, double expected, String source) {
        assertThat(Formulas.sfRatio(spo2Percent, fio2)).as(source).isCloseTo(expected, within(0.01));
    }

    @ParameterizedTest(name = "{6}: PAO2 simplified = {5}")
    @CsvSource(delimiter = '|', textBlock = """
            0.21 | 760   | 47 | 40 | 0.8 | 99.73  | alveolar gas equation via clinical-reference T01 / ex. 1A [PUB-2]
            0.60 | 760   | 47 | 45 | 0.8 | 371.55 | alveolar gas equation via clinical-reference T05 / ex. 1B [PUB-2]
            1.0  | 760   | 47 | 40 | 0.8 | 663.00 | alveolar gas equation via clinical-reference T07 / ex. 1C [PUB-2]
            0.21 | 630   | 47 | 35 | 0.8 | 78.68  | alveolar gas equation via clinical-reference T08 / ex. 1D [PUB-2]
            0.21 | 553.2 | 47 | 32 | 0.8 | 66.30  | alveolar gas equation via clinical-reference ex. 1E [PUB-2]
            """)
    void simplifiedAlveolarGasEquation(
            double fio2, double pb, double ph2o, double paco2, double r, double expected, String source) {
        assertThat(Formulas.alveolarOxygenSimplified(fio2, pb, ph2o, paco2, r))
                .as(source)
                .isCloseTo(expected, within(0.01));
        assertThat(Formulas.alveolarOxygen(AlveolarGasForm.SIMPLIFIED, fio2, pb, ph2o, paco2, r))
                .isCloseTo(expected, within(0.01));
    }

    @ParameterizedTest(name = "{6}: PAO2 full = {5}")
    @CsvSource(delimiter = '|', textBlock = """
            0.21 | 760 | 47 | 40 | 0.8 | 101.83 | full alveolar gas equation via clinical-reference T02 / ex. 1A [PUB-2]
            0.60 | 760 | 47 | 45 | 0.8 | 378.30 | full alveolar gas equation via clinical-reference T06 / ex. 1B [PUB-2]
            1.0  | 760 | 47 | 40 | 0.8 | 673.00 | full alveolar gas equation via clinical-reference T07 / ex. 1C [PUB-2]
            0.21 | 630 | 47 | 35 | 0.8 | 80.52  | full alveolar gas equation via clinical-reference ex. 1D [PUB-2]
            """)
    void fullAlveolarGasEquation(
            double fio2, double pb, double ph2o, double paco2, double r, double expected, String source) {
        assertThat(Formulas.alveolarOxygenFull(fio2, pb, ph2o, paco2, r))
                .as(source)
                .isCloseTo(expected, within(0.01));
        assertThat(Formulas.alveolarOxygen(AlveolarGasForm.FULL, fio2, pb, ph2o, paco2, r))
                .isCloseTo(expected, within(0.01));
    }

    @Test
    void inspiredOxygenIsFio2TimesDryBarometricPressure() {
        // clinical-reference ex. 1A and 1D [PUB-2]: 0.21 × 713 = 149.73; 0.21 × 583 = 122.43
        assertThat(Formulas.inspiredOxygen(0.21, 760, 47)).isCloseTo(149.73, within(0.005));
        assertThat(Formulas.inspiredOxygen(0.21, 630, 47)).isCloseTo(122.43, within(0.005));
    }

    @ParameterizedTest(name = "{4}: A–a = {2}, a/A = {3}")
    @CsvSource(delimiter = '|', textBlock = """
            99.73  | 90  | 9.73   | 0.902 | clinical-reference T03 / T04 (ex. 1A, simplified) [PUB-2]
            371.55 | 110 | 261.55 | 0.296 | clinical-reference ex. 1B (simplified) [PUB-2]
            378.30 | 110 | 268.30 | 0.291 | clinical-reference ex. 1B (full; a/A computed from the sheet's PAO2) [PUB-2]
            663    | 400 | 263    | 0.603 | clinical-reference ex. 1C (simplified) [PUB-2]
            673    | 400 | 273    | 0.594 | clinical-reference ex. 1C (full; a/A computed from the sheet's PAO2) [PUB-2]
            78.68  | 70  | 8.68   | 0.890 | clinical-reference ex. 1D (simplified) [PUB-2]
            66.30  | 60  | 6.30   | 0.905 | clinical-reference ex. 1E (simplified) [PUB-2]
            """)
    void aaGradientAndRatio(double alveolar, double pao2, double gradient, double ratio, String source) {
        assertThat(Formulas.aaGradient(alveolar, pao2)).as(source).isCloseTo(gradient, within(0.01));
        assertThat(Formulas.arterialAlveolarRatio(pao2, alveolar)).as(source).isCloseTo(ratio, within(0.0005));
    }

    @ParameterizedTest(name = "{4}: OI = {3}")
    @CsvSource(delimiter = '|', textBlock = """
            0.60 | 18 | 75 | 14.40 | PALICC 2015 / Thomas 2010 OI via clinical-reference T25 / ex. 4A [PUB-2]
            0.50 | 12 | 80 | 7.50  | PALICC 2015 / Thomas 2010 OI via clinical-reference T27 / ex. 4B [PUB-2]
            """)
    void oxygenationIndex(double fio2, double map, double pao2, double expected, String source) {
        assertThat(Formulas.oxygenationIndex(fio2, map, pao2)).as(source).isCloseTo(expected, within(0.01));
    }

    @ParameterizedTest(name = "{4}: OSI = {3}")
    @CsvSource(delimiter = '|', textBlock = """
            0.60 | 18 | 90 | 12.00 | PALICC 2015 / Thomas 2010 OSI via clinical-reference T26 / ex. 4A [PUB-2]
            0.50 | 12 | 94 | 6.38  | PALICC 2015 / Thomas 2010 OSI via clinical-reference T27 / ex. 4B [PUB-2]
            """)
    void oxygenSaturationIndex(double fio2, double map, double spo2, double expected, String source) {
        assertThat(Formulas.oxygenSaturationIndex(fio2, map, spo2)).as(source).isCloseTo(expected, within(0.01));
    }

    @Test
    void ventilatoryRatioOfTheWorkedExample() {
        // Sinha 2009 via clinical-reference T29 / ex. 5C [PUB-V]: (8400 × 55) / (70.566 × 100 × 37.5) = 1.746
        assertThat(Formulas.ventilatoryRatio(8400, 55, 70.566)).isCloseTo(1.746, within(0.0005));
    }

    @Test
    void ventilatoryRatioIsOneForPredictedVentilationAtIdealPaco2() {
        // Sinha 2009 [PUB-V]: VR is about 1 in normal individuals (VE = 100 mL/kg/min, PaCO2 = 37.5 mmHg)
        assertThat(Formulas.ventilatoryRatio(7000, 37.5, 70)).isCloseTo(1.0, within(1e-12));
    }

    @ParameterizedTest(name = "{3}: VD/VT = {2}")
    @CsvSource(delimiter = '|', textBlock = """
            55 | 22 | 0.600 | Bohr–Enghoff via clinical-reference T28 / ex. 5A [PUB-V Nuckton 2002 method]
            40 | 28 | 0.300 | Bohr–Enghoff via clinical-reference ex. 5B [PUB-V Nuckton 2002 method]
            """)
    void deadSpaceFractionBohrEnghoff(double paco2, double peco2, double expected, String source) {
        assertThat(Formulas.deadSpaceFraction(paco2, peco2)).as(source).isCloseTo(expected, within(0.0005));
    }

    @Test
    void paco2Etco2Gradient() {
        // clinical-reference §5.5 example [CP]: PaCO2 55, PetCO2 40 → 15 mmHg
        assertThat(Formulas.paco2Etco2Gradient(55, 40)).isCloseTo(15, within(1e-12));
    }

    @ParameterizedTest(name = "{3}: PBW {0} {1} cm = {2}")
    @CsvSource(delimiter = '|', textBlock = """
            MALE   | 175   | 70.566 | ARDSNet cm form via clinical-reference T33 / §6.1 table [PUB-2]
            FEMALE | 160   | 52.416 | ARDSNet cm form via clinical-reference T34 / §6.1 table [PUB-2]
            MALE   | 152.4 | 50.000 | ARDSNet cm form via clinical-reference §6.1 table [PUB-2]
            FEMALE | 140   | 34.216 | ARDSNet cm form, no clamping, via clinical-reference T36 [PUB-2]
            MALE   | 190   | 84.216 | ARDSNet cm form via clinical-reference §6.1 table [PUB-2]
            MALE   | 177.8 | 73.114 | ARDSNet cm form for 70 in via clinical-reference §6.1 table [PUB-2]
            """)
    void predictedBodyWeightCmForm(Sex sex, double heightCm, double expected, String source) {
        assertThat(Formulas.predictedBodyWeight(sex, heightCm)).as(source).isCloseTo(expected, within(0.0005));
    }

    @Test
    void predictedBodyWeightIsNotClampedBelowTheReferenceHeight() {
        // clinical-reference trap 9 [PUB-2]: linear below 152.4 cm, no max(50, …)
        assertThat(Formulas.predictedBodyWeightMale(140)).isCloseTo(38.716, within(0.0005));
        assertThat(Formulas.predictedBodyWeightMale(140)).isLessThan(50);
    }

    @Test
    void predictedBodyWeightRefusesAnUnknownSex() {
        assertThatThrownBy(() -> Formulas.predictedBodyWeight(Sex.UNKNOWN, 170))
                .isInstanceOf(IllegalArgumentException.class)
                .hasMessageContaining("sex");
    }

    @ParameterizedTest(name = "{3}: {0} mL / {1} kg = {2}")
    @CsvSource(delimiter = '|', textBlock = """
            420     | 70.566 | 5.95 | ARDSNet via clinical-reference T37 / §6.2 [PUB-2]
            423.396 | 70.566 | 6.00 | ARDSNet target 6 mL/kg, §6.1 table (423.4 mL) [PUB-2]
            314.5   | 52.416 | 6.00 | ARDSNet target 6 mL/kg, §6.1 table (314.5 mL) [PUB-2]
            """)
    void tidalVolumePerKgPredictedBodyWeight(double vt, double pbw, double expected, String source) {
        assertThat(Formulas.tidalVolumePerKg(vt, pbw)).as(source).isCloseTo(expected, within(0.005));
    }

    @ParameterizedTest(name = "{5}: ΔP {3}, Crs {4}")
    @CsvSource(delimiter = '|', textBlock = """
            420 | 26 | 10 | 16 | 26.25 | Amato 2015 ΔP and Crs via clinical-reference T38 / §6.4 [PUB-V; CP]
            500 | 30 | 12 | 18 | 27.78 | Crs via clinical-reference §6.4 second example [CP]
            """)
    void drivingPressureAndStaticCompliance(
            double vt, double plateau, double peep, double deltaP, double compliance, String source) {
        assertThat(Formulas.drivingPressure(plateau, peep)).as(source).isCloseTo(deltaP, within(1e-12));
        assertThat(Formulas.staticCompliance(vt, plateau, peep)).as(source).isCloseTo(compliance, within(0.005));
    }

    @Test
    void staticElastanceOfTheWorkedExample() {
        // clinical-reference T38 / §6.4 [CP]: 16 / 0.42 = 38.10 cmH2O/L = 1000 / Crs
        assertThat(Formulas.staticElastance(0.42, 26, 10)).isCloseTo(38.10, within(0.005));
        assertThat(Formulas.staticElastance(0.42, 26, 10))
                .isCloseTo(1000 / Formulas.staticCompliance(420, 26, 10), within(1e-9));
    }

    @Test
    void mechanicalPowerSurrogateOfTheWorkedExample() {
        // clinical-reference T40 / ex. 6A: 0.098 × 0.42 × 20 × (32 − 8) = 19.757 J/min. The sheet tags the surrogate
        // [PUB-2/MEM]; a search of stored copies found Chiumello 2020 naming "a comprehensive and a surrogate
        // formula" but not its text, so its equality with the full equation (verified text, below) is proven
        // instead by UnitEquivalencePropertyTest.theMechanicalPowerSurrogateEqualsTheFullEquationAtConstantFlow.
        assertThat(Formulas.mechanicalPowerSurrogate(0.42, 20, 32, 26, 10)).isCloseTo(19.757, within(0.001));
    }

    @Test
    void mechanicalPowerFullEquationOfTheWorkedExample() {
        // Gattinoni 2016 full equation via clinical-reference T39 / ex. 6A [PUB-V; its text re-checked in a stored copy
        // of Wu et al., J Clin Monit Comput 2022]: constant flow 1 L/s, VT 0.42 L,
        // RR 20 → Ti 0.42 s, Te 2.58 s; ELrs = 16/0.42; Raw = (32 − 26)/1 = 6 cmH2O/(L/s); MP = 19.757 J/min
        double ie = 0.42 / 2.58;
        double mp = Formulas.mechanicalPowerGattinoni(0.42, 20, 16 / 0.42, 6.0, ie, 10);
        assertThat(mp).isCloseTo(19.757, within(0.001));
        // and the three terms of the example: elastic 6.586, resistive 4.939, PEEP 8.232
        assertThat(Formulas.mechanicalPowerGattinoni(0.42, 20, 16 / 0.42, 0, ie, 0))
                .isCloseTo(6.586, within(0.001));
        assertThat(Formulas.mechanicalPowerGattinoni(0.42, 20, 0, 6.0, ie, 0)).isCloseTo(4.939, within(0.001));
        assertThat(Formulas.mechanicalPowerGattinoni(0.42, 20, 0, 0, ie, 10)).isCloseTo(8.232, within(0.001));
    }

    @ParameterizedTest(name = "{4}: CaO2 with k {0} = {3}")
    @CsvSource(delimiter = '|', textBlock = """
            1.34 | 12 | 0.92 | 14.99 | O2 content via clinical-reference T42 / ex. 7A [PUB-2]
            1.36 | 12 | 0.92 | 15.21 | O2 content via clinical-reference T42 / ex. 7A [PUB-2]
            1.39 | 12 | 0.92 | 15.54 | O2 content via clinical-reference T42 / ex. 7A [PUB-2]
            """)
    void arterialOxygenContent(double k, double hb, double sao2, double expected, String source) {
        assertThat(Formulas.arterialOxygenContent(k, hb, sao2, 65)).as(source).isCloseTo(expected, within(0.005));
    }
}
