package org.lungflag.rules.quality;

import java.util.Arrays;
import java.util.Optional;

/**
 * Why an input was refused (quarantined) or repaired, or why an index or rule was not evaluable. The codes are
 * the CodeSystem {@code http://lungflag.org/fhir/CodeSystem/data-quality} of the conformance package; a
 * cross-module test keeps the two identical.
 */
public enum DataQualityReason {
    // --- refused at intake (the input is quarantined) -------------------------------------------------
    MALFORMED_RESOURCE(
            Use.REFUSED,
            "malformed-resource",
            "Malformed resource",
            "The content is not a parseable FHIR R4 JSON resource."),
    UNSUPPORTED_RESOURCE_TYPE(
            Use.REFUSED,
            "unsupported-resource-type",
            "Unsupported resource type",
            "The resource type is not one Lungflag reads at this endpoint or in this file."),
    UNKNOWN_CODE(
            Use.REFUSED,
            "unknown-code",
            "Unknown code",
            "No coding of Observation.code maps to a quantity kind Lungflag uses (LOINC, IEEE 11073 MDC or the site map)."),
    MISSING_SUBJECT(
            Use.REFUSED,
            "missing-subject",
            "Missing subject",
            "The Observation has no subject reference to a Patient."),
    MISSING_TIME(
            Use.REFUSED,
            "missing-time",
            "Missing clinical time",
            "The Observation has no effective time and no specimen collection time."),
    FUTURE_TIME(
            Use.REFUSED,
            "future-time",
            "Clinical time in the future",
            "The clinical time is later than the receiving clock plus the allowed skew."),
    MISSING_VALUE(
            Use.REFUSED,
            "missing-value",
            "Missing value",
            "The Observation carries no usable value (no valueQuantity, or a value that is not numeric)."),
    NON_FINITE_VALUE(Use.REFUSED, "non-finite-value", "Non-finite value", "The value is not a finite number."),
    UNKNOWN_UNIT(Use.REFUSED, "unknown-unit", "Unknown unit", "The unit is missing or is not a valid UCUM expression."),
    INCOMPATIBLE_UNIT(
            Use.REFUSED,
            "incompatible-unit",
            "Incompatible unit",
            "The unit is valid UCUM but cannot be converted to the canonical unit of the quantity kind."),
    IMPLAUSIBLE_VALUE(
            Use.REFUSED,
            "implausible-value",
            "Implausible value",
            "After conversion the value lies outside the configured physiological plausibility range."),
    FIO2_BELOW_ROOM_AIR(
            Use.REFUSED,
            "fio2-below-room-air",
            "FiO2 below room air",
            "FiO2 below 0.21 (or 21 %); often an oxygen flow in litres per minute charted in the FiO2 field."),
    FIO2_UNIT_CONTRADICTS_VALUE(
            Use.REFUSED,
            "fio2-unit-contradicts-value",
            "FiO2 unit contradicts value",
            "FiO2 charted with unit 1 but a value above 1.0; refused rather than guessed."),
    STATUS_NOT_USABLE(
            Use.REFUSED,
            "status-not-usable",
            "Status not usable",
            "The Observation status is not final, amended or corrected (e.g. preliminary, cancelled)."),
    OUTSIDE_WINDOW(
            Use.REFUSED,
            "outside-window",
            "Older than the timeline window",
            "The clinical time lies before the patient's timeline window; it cannot change any advisory."),
    REJECTED_BY_SERVER(
            Use.REFUSED,
            "rejected-by-server",
            "Rejected by the FHIR server",
            "The FHIR server refused a write permanently (4xx); its OperationOutcome is kept."),
    OUTGOING_INVALID(
            Use.REFUSED,
            "outgoing-invalid",
            "Outgoing resource failed validation",
            "A resource Lungflag was about to write failed validation against its own conformance package."),

    // --- repaired on the way in (accepted, with an audited note) -------------------------------------
    FIO2_FRACTION_CHARTED_AS_PERCENT(
            Use.REPAIRED,
            "fio2-fraction-charted-as-percent",
            "FiO2 fraction charted as percent",
            "FiO2 between 0.21 and 1.0 charted with unit %; read as a fraction and recorded as a repair."),

    // --- not evaluable (the index or rule returns no number, with this reason) -----------------------
    SPECIMEN_VENOUS(
            Use.NOT_EVALUABLE,
            "specimen-venous",
            "Venous or capillary sample",
            "The blood gas is venous, mixed-venous or capillary; arterial-only indices are not computed from it."),
    SPECIMEN_UNSPECIFIED(
            Use.NOT_EVALUABLE,
            "specimen-unspecified",
            "Specimen not stated",
            "The blood gas does not say it is arterial (LOINC system axis or Specimen.type); not used as PaO2."),
    SPO2_ABOVE_97(
            Use.NOT_EVALUABLE,
            "spo2-above-97",
            "SpO2 above 97 %",
            "SpO2 above 97 % lies on the flat part of the dissociation curve; S/F and OSI are not valid there."),
    MISSING_PAO2(Use.NOT_EVALUABLE, "missing-pao2", "No arterial PaO2", "No arterial PaO2 at the anchor time."),
    MISSING_PACO2(Use.NOT_EVALUABLE, "missing-paco2", "No arterial PaCO2", "No arterial PaCO2 at the anchor time."),
    MISSING_SPO2(Use.NOT_EVALUABLE, "missing-spo2", "No SpO2", "No SpO2 within the look-back."),
    MISSING_FIO2(
            Use.NOT_EVALUABLE,
            "missing-fio2",
            "No FiO2 in force",
            "No FiO2 charted within the look-back before the anchor time."),
    MISSING_PEEP(
            Use.NOT_EVALUABLE,
            "missing-peep",
            "No PEEP in force",
            "No PEEP or CPAP charted within the look-back before the anchor time."),
    NO_VENTILATOR_SETTINGS(
            Use.NOT_EVALUABLE,
            "no-ventilator-settings",
            "No ventilator settings in force",
            "Neither FiO2 nor PEEP was charted within the look-back before the blood gas."),
    PEEP_BELOW_MINIMUM(
            Use.NOT_EVALUABLE,
            "peep-below-minimum",
            "PEEP below the definition's minimum",
            "PEEP or CPAP below the minimum the definition requires (Berlin 2012: 5 cmH2O)."),
    MISSING_MEAN_AIRWAY_PRESSURE(
            Use.NOT_EVALUABLE,
            "missing-mean-airway-pressure",
            "No mean airway pressure",
            "No mean airway pressure within the look-back."),
    MISSING_TIDAL_VOLUME(
            Use.NOT_EVALUABLE, "missing-tidal-volume", "No tidal volume", "No tidal volume within the look-back."),
    MISSING_PLATEAU_PRESSURE(
            Use.NOT_EVALUABLE,
            "missing-plateau-pressure",
            "No plateau pressure",
            "No plateau pressure within the look-back."),
    MISSING_MINUTE_VENTILATION(
            Use.NOT_EVALUABLE,
            "missing-minute-ventilation",
            "No minute ventilation",
            "No minute ventilation, and no tidal volume with respiratory rate to derive it, within the look-back."),
    MISSING_RESPIRATORY_RATE(
            Use.NOT_EVALUABLE,
            "missing-respiratory-rate",
            "No respiratory rate",
            "No respiratory rate within the look-back."),
    MISSING_ETCO2(Use.NOT_EVALUABLE, "missing-etco2", "No end-tidal PCO2", "No end-tidal PCO2 at the anchor time."),
    MISSING_MIXED_EXPIRED_PCO2(
            Use.NOT_EVALUABLE,
            "missing-mixed-expired-pco2",
            "No mixed-expired PCO2",
            "No mixed-expired PCO2 at the anchor time; the Bohr–Enghoff dead-space fraction needs it (not EtCO2)."),
    MISSING_HEMOGLOBIN(Use.NOT_EVALUABLE, "missing-hemoglobin", "No hemoglobin", "No hemoglobin within the look-back."),
    MISSING_SAO2(Use.NOT_EVALUABLE, "missing-sao2", "No arterial saturation", "No SaO2 at the anchor time."),
    MISSING_PEAK_PRESSURE(
            Use.NOT_EVALUABLE,
            "missing-peak-pressure",
            "No peak pressure",
            "No peak airway pressure within the look-back."),
    MISSING_HEIGHT(
            Use.NOT_EVALUABLE,
            "missing-height",
            "No height",
            "No body height on record; predicted body weight cannot be computed."),
    MISSING_SEX(
            Use.NOT_EVALUABLE,
            "missing-sex",
            "No sex",
            "Patient sex is unknown; predicted body weight cannot be computed."),
    PLATEAU_BELOW_PEEP(
            Use.NOT_EVALUABLE,
            "plateau-below-peep",
            "Plateau pressure below PEEP",
            "The plateau pressure is below PEEP, which is not physiological; driving pressure is not computed."),
    PEAK_BELOW_PLATEAU(
            Use.NOT_EVALUABLE,
            "peak-below-plateau",
            "Peak pressure below plateau",
            "The peak pressure is below the plateau pressure; mechanical power is not computed."),
    MISSING_SUPPORT(
            Use.NOT_EVALUABLE,
            "missing-support",
            "Respiratory support unknown",
            "The kind of respiratory support at the anchor time is not recorded."),
    SUPPORT_NOT_QUALIFYING(
            Use.NOT_EVALUABLE,
            "support-not-qualifying",
            "Support does not qualify",
            "The respiratory support does not meet the definition (e.g. not intubated and neither high-flow oxygen"
                    + " at 30 L/min or more nor NIV/CPAP at 5 cmH2O or more)."),
    POPULATION_NOT_APPLICABLE(
            Use.NOT_EVALUABLE,
            "population-not-applicable",
            "Rule not for this age group",
            "The rule's population (adult or pediatric) does not match the patient's age at the anchor time."),
    MISSING_BIRTH_DATE(
            Use.NOT_EVALUABLE,
            "missing-birth-date",
            "No birth date",
            "The patient's birth date is unknown, so adult or pediatric definitions cannot be chosen."),
    INSUFFICIENT_HISTORY(
            Use.NOT_EVALUABLE,
            "insufficient-history",
            "Not enough history",
            "The rule needs a trend or a sustained period and the timeline does not yet hold enough values."),
    SITE_PRESSURE_NOT_CONFIGURED(
            Use.NOT_EVALUABLE,
            "site-pressure-not-configured",
            "Site barometric pressure not configured",
            "The altitude-adjusted P/F ratio is computed only where the site configures its barometric pressure"
                    + " (Berlin 2012 footnote); it is never guessed per patient."),
    OUT_OF_FORMULA_RANGE(
            Use.NOT_EVALUABLE,
            "out-of-formula-range",
            "Outside the formula's validated range",
            "An input lies outside the range the published formula was derived for.");

    /** How a reason is used. */
    public enum Use {
        REFUSED,
        REPAIRED,
        NOT_EVALUABLE
    }

    private final Use use;
    private final String code;
    private final String display;
    private final String definition;

    DataQualityReason(Use use, String code, String display, String definition) {
        this.use = use;
        this.code = code;
        this.display = display;
        this.definition = definition;
    }

    public Use use() {
        return use;
    }

    /** The CodeSystem code, e.g. {@code specimen-venous}. */
    public String code() {
        return code;
    }

    public String display() {
        return display;
    }

    public String definition() {
        return definition;
    }

    public static Optional<DataQualityReason> fromCode(String code) {
        return Arrays.stream(values()).filter(r -> r.code.equals(code)).findFirst();
    }
}
