package org.lungflag.sandbox.fhirserver;

import ca.uhn.fhir.rest.client.api.IGenericClient;
import java.util.Date;
import java.util.UUID;
import org.hl7.fhir.instance.model.api.IBaseResource;
import org.hl7.fhir.r4.model.DateTimeType;
import org.hl7.fhir.r4.model.Enumerations.AdministrativeGender;
import org.hl7.fhir.r4.model.Observation;
import org.hl7.fhir.r4.model.Patient;
import org.hl7.fhir.r4.model.Quantity;
import org.hl7.fhir.r4.model.Reference;

/**
 * Invented test resources. Every patient gets a fresh random identifier so that tests sharing one server never see
 * each other's data.
 */
final class TestResources {

    static final String LOINC = "http://loinc.org";
    /** LOINC 2703-7: Oxygen [Partial pressure] in Arterial blood. */
    static final String PAO2 = "2703-7";
    /** LOINC 2019-8: Carbon dioxide [Partial pressure] in Arterial blood. */
    static final String PACO2 = "2019-8";

    private static final String UCUM = "http://unitsofmeasure.org";
    private static final String TEST_PATIENT_SYSTEM = "urn:lungflag:sandbox-test:patient";

    private TestResources() {}

    /** Creates {@code resource} on the server and returns its id without a version, e.g. {@code Patient/1001}. */
    static String create(IGenericClient client, IBaseResource resource) {
        return client.create()
                .resource(resource)
                .execute()
                .getId()
                .toUnqualifiedVersionless()
                .getValue();
    }

    static Patient newPatient() {
        Patient patient = new Patient();
        patient.addIdentifier()
                .setSystem(TEST_PATIENT_SYSTEM)
                .setValue(UUID.randomUUID().toString());
        patient.setGender(AdministrativeGender.FEMALE);
        return patient;
    }

    /** A final blood-gas partial pressure in mm[Hg] for {@code patientId} (e.g. {@code Patient/123}). */
    static Observation bloodGas(String patientId, String loincCode, double mmHg) {
        Observation observation = new Observation();
        observation.setStatus(Observation.ObservationStatus.FINAL);
        observation.getCode().addCoding().setSystem(LOINC).setCode(loincCode);
        observation.setSubject(new Reference(patientId));
        observation.setEffective(new DateTimeType(new Date()));
        observation.setValue(
                new Quantity().setValue(mmHg).setUnit("mmHg").setSystem(UCUM).setCode("mm[Hg]"));
        return observation;
    }
}
