package org.lungflag.service.e2e;

import java.time.Instant;
import java.util.Date;
import org.hl7.fhir.r4.model.CodeableConcept;
import org.hl7.fhir.r4.model.Coding;
import org.hl7.fhir.r4.model.DateTimeType;
import org.hl7.fhir.r4.model.Enumerations.AdministrativeGender;
import org.hl7.fhir.r4.model.Observation;
import org.hl7.fhir.r4.model.Patient;
import org.hl7.fhir.r4.model.Quantity;
import org.hl7.fhir.r4.model.Reference;
import org.lungflag.fhir.profiles.LungflagFhir;

/**
 * Builders for the invented test patients' records (made-up ids, no names). Codes are the conformance package's
 * verified input codes (clinical-reference §11): 2703-7 PaO2, 2019-8 PaCO2, 19994-3 FiO2 setting, 76248-4 PEEP,
 * 8302-2 body height.
 */
public final class FhirFixtures {

    private FhirFixtures() {}

    public static Patient patient(String id, AdministrativeGender gender, String birthDate) {
        Patient p = new Patient();
        p.setId(id);
        p.setGender(gender);
        p.setBirthDateElement(new org.hl7.fhir.r4.model.DateType(birthDate));
        return p;
    }

    public static Observation quantity(
            String patientId, String system, String code, double value, String ucum, Instant at) {
        Observation o = new Observation();
        o.setStatus(Observation.ObservationStatus.FINAL);
        o.setCode(new CodeableConcept(new Coding(system, code, null)));
        o.setSubject(new Reference("Patient/" + patientId));
        o.setEffective(new DateTimeType(Date.from(at)));
        o.setValue(new Quantity()
                .setValue(value)
                .setSystem(LungflagFhir.CodeSystems.UCUM)
                .setCode(ucum));
        return o;
    }

    public static Observation loinc(String patientId, String code, double value, String ucum, Instant at) {
        return quantity(patientId, LungflagFhir.CodeSystems.LOINC, code, value, ucum, at);
    }

    /** A device value marked as a setting (conformance package value-role category). */
    public static Observation setting(String patientId, String code, double value, String ucum, Instant at) {
        Observation o = loinc(patientId, code, value, ucum, at);
        o.addCategory(new CodeableConcept(new Coding(LungflagFhir.CodeSystems.VALUE_ROLE, "setting", null)));
        return o;
    }

    public static Observation support(String patientId, String mode, Instant at) {
        Observation o = new Observation();
        o.setStatus(Observation.ObservationStatus.FINAL);
        o.setCode(new CodeableConcept(new Coding(LungflagFhir.CodeSystems.INPUT_KIND, "respiratory-support", null)));
        o.setSubject(new Reference("Patient/" + patientId));
        o.setEffective(new DateTimeType(Date.from(at)));
        o.setValue(new CodeableConcept(new Coding(LungflagFhir.CodeSystems.RESPIRATORY_SUPPORT, mode, null)));
        return o;
    }
}
