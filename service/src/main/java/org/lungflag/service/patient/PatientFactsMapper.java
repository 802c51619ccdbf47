package org.lungflag.service.patient;

import java.time.LocalDate;
import java.time.ZoneOffset;
import org.hl7.fhir.r4.model.Enumerations.AdministrativeGender;
import org.hl7.fhir.r4.model.Patient;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.patient.Sex;

/**
 * Reads the two facts Lungflag needs from a Patient: sex (for predicted body weight) and birth date (adult or
 * pediatric definitions). Nothing else is read: no name, no identifier. R4 has only administrative gender, so it
 * is used as the sex for clinical use (clinical-reference §6.1 notes the difference; common practice, no source).
 */
public final class PatientFactsMapper {

    private PatientFactsMapper() {}

    public static PatientFacts from(Patient patient) {
        String id = patient.getIdElement().getIdPart();
        Sex sex = sex(patient.getGender());
        LocalDate birth = patient.hasBirthDate()
                ? patient.getBirthDate().toInstant().atZone(ZoneOffset.UTC).toLocalDate()
                : null;
        if (patient.hasBirthDateElement() && patient.getBirthDateElement().getValueAsString() != null) {
            String text = patient.getBirthDateElement().getValueAsString();
            if (text.length() >= 10) {
                birth = LocalDate.parse(text.substring(0, 10));
            }
        }
        return new PatientFacts(id, sex, birth);
    }

    static Sex sex(AdministrativeGender gender) {
        if (gender == null) {
            return Sex.UNKNOWN;
        }
        return switch (gender) {
            case MALE -> Sex.MALE;
            case FEMALE -> Sex.FEMALE;
            default -> Sex.UNKNOWN;
        };
    }
}
