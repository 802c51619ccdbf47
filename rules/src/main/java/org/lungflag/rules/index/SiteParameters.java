package org.lungflag.rules.index;

import java.util.List;
import java.util.Objects;

/**
 * Constants of the index formulas that a site configures, never guessed per patient. Defaults and their sources:
 *
 * <ul>
 *   <li>{@code barometricPressureMmHg}: unset by default. When set, the altitude-adjusted P/F ratio is computed
 *       (Berlin 2012 footnote, clinical-reference §2.4 [PUB-2]) and the alveolar gas equation uses it when the
 *       analyser charted none. Set it only where the site's barometric pressure is known (above about 1000 m).
 *   <li>{@code waterVapourPressureMmHg}: 47 mmHg, water vapour pressure at 37 °C (clinical-reference §1.1
 *       [PUB-2]).
 *   <li>{@code respiratoryQuotient}: R = 0.8 (clinical-reference §1.1 [PUB-2]; R is not measured in routine care).
 *   <li>{@code hufnerConstant}: k = 1.34 mL O2 per g Hb, the empirically measured value quoted most often; 1.36
 *       and 1.39 are also published (clinical-reference §7.1 [PUB-2], trap 15: always shown in the notes).
 *   <li>{@code alveolarGasForm}: {@link AlveolarGasForm#SIMPLIFIED} (clinical-reference §1.1 [PUB-2]).
 * </ul>
 *
 * @param barometricPressureMmHg the site's barometric pressure in mmHg, or {@code null} when not configured
 */
public record SiteParameters(
        Double barometricPressureMmHg,
        double waterVapourPressureMmHg,
        double respiratoryQuotient,
        double hufnerConstant,
        AlveolarGasForm alveolarGasForm) {

    public static final double DEFAULT_WATER_VAPOUR_PRESSURE_MMHG = 47.0;
    public static final double DEFAULT_RESPIRATORY_QUOTIENT = 0.8;
    public static final double DEFAULT_HUFNER_CONSTANT = 1.34;
    public static final AlveolarGasForm DEFAULT_ALVEOLAR_GAS_FORM = AlveolarGasForm.SIMPLIFIED;

    /** A default, its unit and where it comes from: for the index catalog and the configuration docs. */
    public record Default(String name, String value, String unit, String source) {}

    /** Every default with its source. */
    public static final List<Default> DEFAULTS = List.of(
            new Default(
                    "barometricPressureMmHg",
                    "not set",
                    "mm[Hg]",
                    "Berlin 2012 footnote (P/F × Pb/760 above 1000 m), clinical-reference §2.4 [PUB-2]; a site"
                            + " configuration, never a per-patient guess"),
            new Default(
                    "waterVapourPressureMmHg",
                    "47",
                    "mm[Hg]",
                    "water vapour pressure at 37 °C, clinical-reference §1.1 [PUB-2]"),
            new Default(
                    "respiratoryQuotient",
                    "0.8",
                    "1",
                    "respiratory exchange ratio assumed when not measured, clinical-reference §1.1 [PUB-2]"),
            new Default(
                    "hufnerConstant",
                    "1.34",
                    "mL/g",
                    "mL O2 bound per g haemoglobin; 1.34 (measured) is the usual value, 1.36 and 1.39 are also"
                            + " published, clinical-reference §7.1 [PUB-2]"),
            new Default(
                    "alveolarGasForm",
                    "SIMPLIFIED",
                    "",
                    "simplified alveolar gas equation, clinical-reference §1.1 [PUB-2]"));

    public SiteParameters {
        Objects.requireNonNull(alveolarGasForm, "alveolarGasForm");
        if (barometricPressureMmHg != null) {
            requireWithin("barometricPressureMmHg", barometricPressureMmHg, 350, 820);
        }
        requireWithin("waterVapourPressureMmHg", waterVapourPressureMmHg, 30, 60);
        requireWithin("respiratoryQuotient", respiratoryQuotient, 0.6, 1.3);
        requireWithin("hufnerConstant", hufnerConstant, 1.30, 1.40);
    }

    /** The defaults above, with no site barometric pressure. */
    public static SiteParameters defaults() {
        return new SiteParameters(
                null,
                DEFAULT_WATER_VAPOUR_PRESSURE_MMHG,
                DEFAULT_RESPIRATORY_QUOTIENT,
                DEFAULT_HUFNER_CONSTANT,
                DEFAULT_ALVEOLAR_GAS_FORM);
    }

    public SiteParameters withBarometricPressure(Double mmHg) {
        return new SiteParameters(mmHg, waterVapourPressureMmHg, respiratoryQuotient, hufnerConstant, alveolarGasForm);
    }

    public SiteParameters withHufnerConstant(double k) {
        return new SiteParameters(
                barometricPressureMmHg, waterVapourPressureMmHg, respiratoryQuotient, k, alveolarGasForm);
    }

    public SiteParameters withAlveolarGasForm(AlveolarGasForm form) {
        return new SiteParameters(
                barometricPressureMmHg, waterVapourPressureMmHg, respiratoryQuotient, hufnerConstant, form);
    }

    public SiteParameters withRespiratoryQuotient(double r) {
        return new SiteParameters(barometricPressureMmHg, waterVapourPressureMmHg, r, hufnerConstant, alveolarGasForm);
    }

    public boolean hasBarometricPressure() {
        return barometricPressureMmHg != null;
    }

    private static void requireWithin(String name, double value, double min, double max) {
        if (!(value >= min && value <= max)) {
            throw new IllegalArgumentException(
                    "site parameter " + name + " = " + value + " lies outside " + min + "–" + max);
        }
    }
}
