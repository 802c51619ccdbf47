package org.lungflag.service.normalize;

import static org.lungflag.rules.measure.QuantityKind.*;
import static org.lungflag.rules.measure.SpecimenKind.ARTERIAL;
import static org.lungflag.rules.measure.SpecimenKind.CAPILLARY;
import static org.lungflag.rules.measure.SpecimenKind.NOT_APPLICABLE;
import static org.lungflag.rules.measure.SpecimenKind.UNKNOWN;
import static org.lungflag.rules.measure.SpecimenKind.VENOUS;
import static org.lungflag.rules.measure.ValueRole.MEASUREMENT;
import static org.lungflag.rules.measure.ValueRole.SETTING;

import java.util.Collections;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.ValueRole;

/**
 * The input codes Lungflag understands out of the box: LOINC and IEEE 11073 MDC codes that clinical-reference §11
 * marks as verified in a named public file, plus Lungflag's own input codes for what no standard code covers.
 * Sites add their local codes with a ConceptMap ({@link SiteCodeMap}). Codes the sheet could not verify are left
 * out on purpose (fhir-profiles/REVIEW.md lists them) and can be added per site.
 */
public final class CodeMap {

    public static final String LOINC = "http://loinc.org";
    public static final String MDC = "urn:iso:std:iso:11073:10101";
    /** Lungflag's own input codes (mixed-expired PCO2, respiratory support, body position). */
    public static final String LUNGFLAG_INPUT = "http://lungflag.org/fhir/CodeSystem/input";

    /** LOINC 59408-5 and MDC 150456 mark pulse oximetry; 2708-6 alone may be either (clinical-reference §11.3). */
    public static final String LOINC_SPO2 = "59408-5";

    public static final String LOINC_SAO2_OR_SPO2 = "2708-6";
    public static final String MDC_SPO2 = "150456";

    private final Map<String, CodeMapping> byKey;

    private CodeMap(Map<String, CodeMapping> byKey) {
        this.byKey = Collections.unmodifiableMap(byKey);
    }

    /** The built-in map. */
    public static CodeMap standard() {
        Map<String, CodeMapping> m = new LinkedHashMap<>();
        // Blood gas (LOINC system axis gives the specimen; §11.1)
        loinc(m, "2703-7", PAO2, MEASUREMENT, ARTERIAL, "GECCO PaO2.fsh; DICOM CID 3524");
        loinc(m, "11556-8", PAO2, MEASUREMENT, UNKNOWN, "GECCO; DICOM CID 3524");
        loinc(m, "2704-5", PAO2, MEASUREMENT, CAPILLARY, "GECCO");
        loinc(m, "2705-2", PAO2, MEASUREMENT, VENOUS, "DICOM CID 3524");
        loinc(m, "2019-8", PACO2, MEASUREMENT, ARTERIAL, "GECCO PaCO2.fsh; DICOM");
        loinc(m, "11557-6", PACO2, MEASUREMENT, UNKNOWN, "GECCO");
        loinc(m, "2020-6", PACO2, MEASUREMENT, CAPILLARY, "GECCO");
        loinc(m, "2021-4", PACO2, MEASUREMENT, VENOUS, "DICOM");
        loinc(m, "2744-1", PH, MEASUREMENT, ARTERIAL, "GECCO PH.fsh; DICOM CID 3528");
        loinc(m, "11558-4", PH, MEASUREMENT, UNKNOWN, "GECCO");
        loinc(m, "2745-8", PH, MEASUREMENT, CAPILLARY, "GECCO");
        loinc(m, "2746-6", PH, MEASUREMENT, VENOUS, "DICOM");
        loinc(m, LOINC_SAO2_OR_SPO2, SAO2, MEASUREMENT, ARTERIAL, "DICOM CID 3526; US Core (also used for SpO2)");
        loinc(m, "2711-0", SAO2, MEASUREMENT, VENOUS, "DICOM CID 3526");
        loinc(m, "20564-1", SAO2, MEASUREMENT, UNKNOWN, "DICOM CID 3526");
        loinc(m, "718-7", HEMOGLOBIN, MEASUREMENT, UNKNOWN, "Vulcan LOINC-718-7");
        // Oxygen therapy, vital signs, body measures (§11.2)
        loinc(m, LOINC_SPO2, SPO2, MEASUREMENT, NOT_APPLICABLE, "US Core Observation-satO2-fiO2");
        loinc(m, "3150-0", FIO2, SETTING, NOT_APPLICABLE, "GECCO FiO2.fsh");
        loinc(m, "19994-3", FIO2, SETTING, NOT_APPLICABLE, "MII ICU FiO2-set example");
        loinc(m, "71835-3", FIO2, MEASUREMENT, NOT_APPLICABLE, "MII ICU FiO2-measured example");
        loinc(m, "3151-8", O2_FLOW, SETTING, NOT_APPLICABLE, "US Core");
        loinc(m, "9279-1", RESPIRATORY_RATE, MEASUREMENT, NOT_APPLICABLE, "MII test data");
        loinc(m, "8302-2", BODY_HEIGHT, MEASUREMENT, NOT_APPLICABLE, "MII test data; HL7 uv-pocd");
        loinc(m, "8306-3", BODY_HEIGHT, MEASUREMENT, NOT_APPLICABLE, "MII test data; HL7 uv-pocd");
        loinc(m, "29463-7", BODY_WEIGHT, MEASUREMENT, NOT_APPLICABLE, "MII test data; HL7 uv-pocd");
        loinc(m, "8335-2", BODY_WEIGHT, MEASUREMENT, NOT_APPLICABLE, "MII test data");
        // Ventilator (§11.3)
        loinc(m, "76248-4", PEEP, MEASUREMENT, NOT_APPLICABLE, "MII ICU; T-CABS (role from other evidence)");
        loinc(m, "20077-4", PEEP, SETTING, NOT_APPLICABLE, "SANER examples [MULTI]; named setting code");
        loinc(m, "76259-1", PLATEAU_PRESSURE, MEASUREMENT, NOT_APPLICABLE, "MII VentUndParameter.fsh");
        loinc(m, "76531-3", PEAK_PRESSURE, MEASUREMENT, NOT_APPLICABLE, "MII test data; T-CABS");
        loinc(m, "76530-5", MEAN_AIRWAY_PRESSURE, MEASUREMENT, NOT_APPLICABLE, "MII ICU example");
        loinc(m, "20112-9", TIDAL_VOLUME, SETTING, NOT_APPLICABLE, "MII ICU example");
        loinc(m, "76222-9", TIDAL_VOLUME, MEASUREMENT, NOT_APPLICABLE, "MII ICU example");
        loinc(m, "76009-0", MINUTE_VENTILATION, MEASUREMENT, NOT_APPLICABLE, "MII test data");
        loinc(m, "33438-3", RESPIRATORY_RATE, MEASUREMENT, NOT_APPLICABLE, "MII test data");
        loinc(m, "19840-8", RESPIRATORY_RATE, MEASUREMENT, NOT_APPLICABLE, "MII test data");
        loinc(m, "19891-1", ETCO2, MEASUREMENT, NOT_APPLICABLE, "MII test data and EtCO2 profile");
        mdc(m, MDC_SPO2, SPO2, MEASUREMENT, "US Core");
        mdc(m, "151976", PEEP, MEASUREMENT, "MII test data; T-CABS");
        mdc(m, "152424", PLATEAU_PRESSURE, MEASUREMENT, "MII VentUndParameter.fsh");
        mdc(m, "151957", PEAK_PRESSURE, MEASUREMENT, "MII test data (T-CABS uses 151973)");
        mdc(m, "151973", PEAK_PRESSURE, MEASUREMENT, "T-CABS (MII uses 151957)");
        mdc(m, "16929196", TIDAL_VOLUME, SETTING, "MII ICU example");
        mdc(m, "151980", TIDAL_VOLUME, MEASUREMENT, "MII ICU example");
        mdc(m, "152004", MINUTE_VENTILATION, MEASUREMENT, "MII test data");
        mdc(m, "151586", RESPIRATORY_RATE, MEASUREMENT, "MII test data");
        mdc(m, "152490", RESPIRATORY_RATE, MEASUREMENT, "MII test data");
        mdc(m, "151708", ETCO2, MEASUREMENT, "MII test data");
        // Lungflag's own codes where no standard code was found (§11.3: no LOINC for mixed-expired PCO2)
        own(m, "mixed-expired-pco2", MIXED_EXPIRED_PCO2, MEASUREMENT);
        own(m, "inspiratory-flow", INSPIRATORY_FLOW, SETTING);
        own(m, "barometric-pressure", BAROMETRIC_PRESSURE, MEASUREMENT);
        own(m, "respiratory-support", RESPIRATORY_SUPPORT, SETTING);
        own(m, "body-position", BODY_POSITION, MEASUREMENT);
        return new CodeMap(m);
    }

    private static void loinc(
            Map<String, CodeMapping> m,
            String code,
            QuantityKind kind,
            ValueRole role,
            SpecimenKind specimen,
            String source) {
        m.put(key(LOINC, code), new CodeMapping(kind, role, specimen, "LOINC, " + source));
    }

    private static void mdc(Map<String, CodeMapping> m, String code, QuantityKind kind, ValueRole role, String source) {
        SpecimenKind specimen = kind.isBloodSample() ? UNKNOWN : NOT_APPLICABLE;
        m.put(key(MDC, code), new CodeMapping(kind, role, specimen, "IEEE 11073 MDC, " + source));
    }

    private static void own(Map<String, CodeMapping> m, String code, QuantityKind kind, ValueRole role) {
        m.put(key(LUNGFLAG_INPUT, code), new CodeMapping(kind, role, NOT_APPLICABLE, "Lungflag input code"));
    }

    static String key(String system, String code) {
        return system + "|" + code;
    }

    public Optional<CodeMapping> lookup(String system, String code) {
        if (system == null || code == null) {
            return Optional.empty();
        }
        return Optional.ofNullable(byKey.get(key(system, code)));
    }

    /** A copy of this map with extra entries (a site's ConceptMap); extra entries win. */
    public CodeMap with(Map<String, CodeMapping> extra) {
        Map<String, CodeMapping> m = new LinkedHashMap<>(byKey);
        m.putAll(extra);
        return new CodeMap(m);
    }

    /** Every mapped coding as {@code system|code}, for Subscription criteria and the catch-up search. */
    public List<String> codings() {
        return List.copyOf(byKey.keySet());
    }

    /** Every mapped coding of one system. */
    public List<String> codes(String system) {
        return byKey.keySet().stream()
                .filter(k -> k.startsWith(system + "|"))
                .map(k -> k.substring(system.length() + 1))
                .toList();
    }
}
