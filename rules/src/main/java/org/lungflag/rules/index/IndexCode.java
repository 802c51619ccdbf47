package org.lungflag.rules.index;

import java.util.Arrays;
import java.util.Optional;

/**
 * The derived respiratory indices. The codes are those of the CodeSystem {@code
 * http://lungflag.org/fhir/CodeSystem/index} (design.md); a LOINC code is given where LOINC has one.
 */
public enum IndexCode {
    PF_RATIO("pf-ratio", "PaO2/FiO2 ratio", "mm[Hg]", "50984-4"),
    PF_RATIO_ALTITUDE_ADJUSTED(
            "pf-ratio-altitude-adjusted", "PaO2/FiO2 ratio adjusted for barometric pressure", "mm[Hg]", null),
    SF_RATIO("sf-ratio", "SpO2/FiO2 ratio", "1", null),
    ALVEOLAR_OXYGEN("alveolar-oxygen", "Alveolar oxygen partial pressure (alveolar gas equation)", "mm[Hg]", null),
    AA_GRADIENT("aa-gradient", "Alveolar–arterial oxygen gradient", "mm[Hg]", null),
    ARTERIAL_ALVEOLAR_RATIO("arterial-alveolar-ratio", "Arterial/alveolar oxygen ratio (a/A)", "1", null),
    OXYGENATION_INDEX("oxygenation-index", "Oxygenation index", "1", null),
    OXYGEN_SATURATION_INDEX("oxygen-saturation-index", "Oxygen saturation index", "1", null),
    VENTILATORY_RATIO("ventilatory-ratio", "Ventilatory ratio", "1", null),
    DEAD_SPACE_FRACTION("dead-space-fraction", "Physiological dead-space fraction (Bohr–Enghoff)", "1", null),
    PACO2_ETCO2_GRADIENT("paco2-etco2-gradient", "Arterial to end-tidal PCO2 gradient", "mm[Hg]", null),
    DRIVING_PRESSURE("driving-pressure", "Driving pressure", "cm[H2O]", null),
    STATIC_COMPLIANCE("static-compliance", "Static respiratory-system compliance", "mL/cm[H2O]", null),
    PREDICTED_BODY_WEIGHT("predicted-body-weight", "Predicted body weight", "kg", null),
    TIDAL_VOLUME_PER_PBW("tidal-volume-per-pbw", "Tidal volume per kg predicted body weight", "mL/kg", null),
    MECHANICAL_POWER("mechanical-power", "Mechanical power", "J/min", null),
    ARTERIAL_OXYGEN_CONTENT("arterial-oxygen-content", "Arterial oxygen content", "mL/dL", null);

    private final String code;
    private final String display;
    private final String unit;
    private final String loinc;

    IndexCode(String code, String display, String unit, String loinc) {
        this.code = code;
        this.display = display;
        this.unit = unit;
        this.loinc = loinc;
    }

    /** The CodeSystem code, e.g. {@code pf-ratio}. */
    public String code() {
        return code;
    }

    public String display() {
        return display;
    }

    /** UCUM unit of the value ({@code 1} for dimensionless ratios). */
    public String unit() {
        return unit;
    }

    /** The LOINC code for this index, if LOINC has one. */
    public Optional<String> loinc() {
        return Optional.ofNullable(loinc);
    }

    public static Optional<IndexCode> fromCode(String code) {
        return Arrays.stream(values()).filter(c -> c.code.equals(code)).findFirst();
    }
}
