package org.lungflag.service.normalize;

import java.util.Map;
import java.util.Optional;
import org.hl7.fhir.r4.model.CodeableConcept;
import org.hl7.fhir.r4.model.Coding;
import org.lungflag.rules.measure.SpecimenKind;

/**
 * Specimen.type codes (SNOMED CT, clinical-reference §11.4) and HL7 v2 table 0487 codes. The SNOMED arterial,
 * venous and capillary codes are corroborated by several public value sets ([MULTI]); 119297000 is [CODE-V]. The
 * v2 codes are from memory (unverified) and only used when a feed sends them.
 */
final class SpecimenCodes {

    static final String SNOMED = "http://snomed.info/sct";
    static final String V2_0487 = "http://terminology.hl7.org/CodeSystem/v2-0487";

    private static final Map<String, SpecimenKind> CODES = Map.of(
            SNOMED + "|122552005", SpecimenKind.ARTERIAL,
            SNOMED + "|122555007", SpecimenKind.VENOUS,
            SNOMED + "|122554006", SpecimenKind.CAPILLARY,
            SNOMED + "|119297000", SpecimenKind.UNKNOWN,
            SNOMED + "|258580003", SpecimenKind.UNKNOWN,
            V2_0487 + "|BLDA", SpecimenKind.ARTERIAL,
            V2_0487 + "|BLDV", SpecimenKind.VENOUS,
            V2_0487 + "|BLDC", SpecimenKind.CAPILLARY);

    private SpecimenCodes() {}

    static Optional<SpecimenKind> kind(CodeableConcept type) {
        if (type == null) {
            return Optional.empty();
        }
        for (Coding c : type.getCoding()) {
            SpecimenKind kind = CODES.get(c.getSystem() + "|" + c.getCode());
            if (kind != null) {
                return Optional.of(kind);
            }
        }
        return Optional.empty();
    }
}
