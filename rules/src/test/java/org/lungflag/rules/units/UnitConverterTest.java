package org.lungflag.rules.units;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.within;

import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.CsvSource;
import org.junit.jupiter.params.provider.ValueSource;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.quality.DataQualityReason;

/**
 * UCUM conversions against clinical-reference §9.1 and against the UCUM reference library itself ({@code
 * org.fhir:ucum}, UCUM essence: mm[Hg] = 133.3220 Pa, m[H2O] = 9.80665 kPa [CODE-V ucum-org/ucum
 * ucum-essence.xml]).
 */
class UnitConverterTest {

    private final UnitConverter converter = UnitConverter.shared();

    private double convert(double value, String from, String to) {
        ConversionResult r = converter.convert(value, from, to);
        assertThat(r).as(value + " " + from + " → " + to).isInstanceOf(ConversionResult.Converted.class);
        return ((ConversionResult.Converted) r).value();
    }

    private ConversionResult.Failed failure(double value, String from, String to) {
        ConversionResult r = converter.convert(value, from, to);
        assertThat(r).as(value + " " + from + " → " + to).isInstanceOf(ConversionResult.Failed.class);
        return (ConversionResult.Failed) r;
    }

    @ParameterizedTest(name = "{4}: {0} {1} = {3} {2}")
    @CsvSource(delimiter = '|', textBlock = """
            300   | mm[Hg]  | kPa    | 39.997 | 0.0005 | clinical-reference T48 / §9.1 check values (UCUM)
            200   | mm[Hg]  | kPa    | 26.664 | 0.0005 | clinical-reference T48 / §9.1 check values (UCUM)
            150   | mm[Hg]  | kPa    | 19.998 | 0.0005 | clinical-reference §9.1 check values (UCUM)
            100   | mm[Hg]  | kPa    | 13.332 | 0.0005 | clinical-reference T48 / §9.1 check values (UCUM)
            10.7  | kPa     | mm[Hg] | 80.257 | 0.0005 | clinical-reference §9.1 / ex. 2D (UCUM)
            8.0   | kPa     | mm[Hg] | 60.005 | 0.0005 | clinical-reference ex. 2H (UCUM)
            1     | kPa     | mm[Hg] | 7.500638 | 0.0000005 | clinical-reference §9.1: 1 kPa = 7.500638 mmHg under UCUM [CODE-V]
            30    | cm[H2O] | hPa    | 29.420 | 0.0005 | clinical-reference T49 / §9.1 (UCUM m[H2O] = 9.80665 kPa)
            30    | cm[H2O] | mbar   | 29.420 | 0.0005 | clinical-reference §9.1: 1 hPa = 1 mbar
            30    | cm[H2O] | mm[Hg] | 22.07  | 0.005  | clinical-reference §9.1 check values
            30    | cm[H2O] | kPa    | 2.942  | 0.0005 | clinical-reference §9.1 check values
            1     | mm[Hg]  | cm[H2O] | 1.35951 | 0.00001 | clinical-reference §9.1 (derived)
            1     | kPa     | cm[H2O] | 10.19716 | 0.00001 | clinical-reference §9.1 (derived)
            1     | hPa     | cm[H2O] | 1.019716 | 0.000001 | clinical-reference §9.1 (derived)
            1     | mm[Hg]  | Pa     | 133.3220 | 0.00005 | clinical-reference §9.1: UCUM m[Hg] = 133.3220 kPa [CODE-V]
            1     | cm[H2O] | Pa     | 98.0665 | 0.00005 | clinical-reference §9.1: UCUM m[H2O] = 9.80665 kPa [CODE-V]
            """)
    void pressureConversionsMatchTheReferenceSheet(
            double value, String from, String to, double expected, double tolerance, String source) {
        assertThat(convert(value, from, to)).as(source).isCloseTo(expected, within(tolerance));
    }

    @ParameterizedTest(name = "{0} {1} → {3} {2}")
    @CsvSource(delimiter = '|', textBlock = """
            40     | %              | 1       | 0.40
            92     | %              | 1       | 0.92
            400    | mL/L           | 1       | 0.40
            0.4    | {ratio}        | 1       | 0.40
            8400   | mL/min         | L/min   | 8.4
            8.4    | L/min          | L/min   | 8.4
            175    | cm             | cm      | 175
            70     | [in_i]         | cm      | 177.8
            1.75   | m              | cm      | 175
            80000  | g              | kg      | 80
            154    | [lb_av]        | kg      | 69.85322498
            20     | /min           | /min    | 20
            20     | {breaths}/min  | /min    | 20
            20     | {Breaths}/min  | /min    | 20
            20     | 1/min          | /min    | 20
            12     | g/dL           | g/dL    | 12
            120    | g/L            | g/dL    | 12
            7.4    | [pH]           | [pH]    | 7.4
            420    | mL             | mL      | 420
            0.42   | L              | mL      | 420
            """)
    void convertsTheUnitsChartsUse(double value, String from, String to, double expected) {
        // UCUM [CODE-V]: [in_i] = 2.54 cm, [lb_av] = 453.59237 g, annotations {…} are unity
        assertThat(convert(value, from, to)).isCloseTo(expected, within(1e-9));
    }

    @ParameterizedTest(name = "{0} {1} → {2} agrees with the UCUM library")
    @CsvSource({
        "10.7, kPa, mm[Hg]",
        "8.0, kPa, mm[Hg]",
        "13.3, kPa, mm[Hg]",
        "300, mm[Hg], kPa",
        "30, cm[H2O], mbar",
        "27.5, mbar, cm[H2O]",
        "68.5, [in_i], cm",
        "176.4, [lb_av], kg",
        "97, %, 1",
        "6300, mL/min, L/min",
        "11.2, g/L, g/dL"
    })
    void theCachedFactorPathAgreesWithTheLibrarysOwnDecimalConversion(String value, String from, String to)
            throws Exception {
        // The library converts the decimal string itself. It keeps no more significant digits than the input and
        // the unit definition carry (so 68.5 [in_i] shows as 174.0 cm although [in_i] is exactly 2.54 cm), so the
        // check is: equal to within the last digit the library states.
        String precise = new java.math.BigDecimal(value).setScale(20).toPlainString();
        java.math.BigDecimal reference = new java.math.BigDecimal(converter.convertWithLibrary(precise, from, to));
        double tolerance = Math.max(reference.ulp().doubleValue(), Math.ulp(reference.doubleValue()) * 2);
        assertThat(convert(Double.parseDouble(value), from, to)).isCloseTo(reference.doubleValue(), within(tolerance));
    }

    @Test
    void exactFactorsAreAppliedExactly() {
        // UCUM [CODE-V]: [in_i] = 2.54 cm exactly, so 68.5 in = 173.99 cm (the library's own output rounds to 174.0)
        assertThat(convert(68.5, "[in_i]", "cm")).isEqualTo(173.99);
        assertThat(convert(21, "%", "1")).isEqualTo(0.21);
        assertThat(convert(97, "%", "1")).isEqualTo(0.97);
    }

    @ParameterizedTest
    @ValueSource(strings = {"cm[H20]", "mmHg", "cmH2O", "breaths/min", "foo", "kg/m^2"})
    void invalidUcumIsAnUnknownUnit(String unit) {
        // clinical-reference §9.3: a published example mistyped cm[H20] with a zero [MULTI]
        ConversionResult.Failed f = failure(10, unit, "cm[H2O]");
        assertThat(f.reason()).isEqualTo(DataQualityReason.UNKNOWN_UNIT);
        assertThat(f.detail()).contains(unit);
    }

    @Test
    void aMissingUnitIsAnUnknownUnit() {
        assertThat(failure(10, null, "cm[H2O]").reason()).isEqualTo(DataQualityReason.UNKNOWN_UNIT);
        assertThat(failure(10, " ", "cm[H2O]").reason()).isEqualTo(DataQualityReason.UNKNOWN_UNIT);
    }

    @ParameterizedTest
    @CsvSource({"mL, mm[Hg]", "kg, cm", "L/min, mL", "%, mm[Hg]", "/min, 1", "mol/L, g/dL"})
    void validUcumOfTheWrongDimensionIsIncompatible(String from, String to) {
        assertThat(failure(10, from, to).reason()).isEqualTo(DataQualityReason.INCOMPATIBLE_UNIT);
    }

    @ParameterizedTest
    @CsvSource({"mol/L, [pH]", "[pH], mol/L", "Cel, K", "[degF], Cel"})
    void specialUnitsAreOnlyAcceptedAsThemselves(String from, String to) {
        // UCUM special units are not ratio-scale; the library cannot convert them linearly
        assertThat(failure(7.4, from, to).reason()).isEqualTo(DataQualityReason.INCOMPATIBLE_UNIT);
    }

    @Test
    void nonFiniteValuesAreRefused() {
        assertThat(failure(Double.NaN, "kPa", "mm[Hg]").reason()).isEqualTo(DataQualityReason.NON_FINITE_VALUE);
        assertThat(failure(Double.POSITIVE_INFINITY, "kPa", "mm[Hg]").reason())
                .isEqualTo(DataQualityReason.NON_FINITE_VALUE);
    }

    @Test
    void toCanonicalUsesTheKindsCanonicalUnit() {
        ConversionResult r = converter.toCanonical(QuantityKind.PAO2, 10.7, "kPa");
        assertThat(r).isEqualTo(new ConversionResult.Converted(((ConversionResult.Converted) r).value(), "mm[Hg]"));
        assertThat(((ConversionResult.Converted) r).value()).isCloseTo(80.257, within(0.0005));
        assertThat(converter.toCanonical(QuantityKind.BODY_POSITION, 1, "1"))
                .isInstanceOf(ConversionResult.Failed.class);
    }

    @Test
    void reportsTheUcumVersionItLoaded() {
        assertThat(converter.ucumVersion()).isNotBlank();
        assertThat(converter.isValid("mm[Hg]")).isTrue();
        assertThat(converter.isValid("cm[H20]")).isFalse();
    }

    @Test
    void detailsDoNotEchoControlCharactersOrLongText() {
        String junk = "patient\nname " + "x".repeat(200);
        ConversionResult.Failed f = failure(1, junk, "mm[Hg]");
        assertThat(f.detail()).doesNotContain("\n").hasSizeLessThan(200);
    }
}
