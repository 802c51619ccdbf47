package org.lungflag.service.replay;

import ca.uhn.fhir.context.FhirContext;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Instant;
import java.time.temporal.ChronoUnit;
import java.util.ArrayList;
import java.util.Date;
import java.util.List;
import java.util.Random;
import org.hl7.fhir.r4.model.CodeableConcept;
import org.hl7.fhir.r4.model.Coding;
import org.hl7.fhir.r4.model.DateTimeType;
import org.hl7.fhir.r4.model.Enumerations.AdministrativeGender;
import org.hl7.fhir.r4.model.Observation;
import org.hl7.fhir.r4.model.Patient;
import org.hl7.fhir.r4.model.Quantity;
import org.hl7.fhir.r4.model.Reference;
import org.hl7.fhir.r4.model.Resource;
import org.lungflag.fhir.profiles.LungflagFhir;

/**
 * Invented ward data for replay tests (made-up ids, no names; the demo's imaginary hospital). Codes are the
 * conformance package's verified input codes (clinical-reference §11): 2703-7 PaO2, 19994-3 FiO2 setting, 76248-4
 * PEEP, 8302-2 body height; respiratory support from the package's own CodeSystem.
 *
 * <p>Every patient is ventilated with PEEP 10 cmH2O (the Berlin 2012 bands need PEEP ≥ 5) and has a blood gas every
 * 4 h; the PaO2 is chosen so that P/F = PaO2 / FiO2 is a whole number. All patients have their last blood gas at the
 * same time, the end of the "export".
 */
final class ReplayFixtures {

    static final FhirContext FHIR = FhirContext.forR4Cached();

    private ReplayFixtures() {}

    /** One patient's invented course: the P/F ratio at each 4-hourly blood gas, and the FiO2 set. */
    record Course(String patientId, AdministrativeGender gender, String birthDate, double fio2, int[] pf) {}

    /** {@code n} patients with seeded random P/F courses between 60 and 420 mmHg (10 gases, 36 h). */
    static List<Course> ward(long seed, int n, String prefix) {
        Random random = new Random(seed);
        List<Course> out = new ArrayList<>();
        double[] fio2s = {0.4, 0.5, 0.6};
        for (int i = 0; i < n; i++) {
            int[] pf = new int[10];
            int level = 80 + random.nextInt(320);
            for (int k = 0; k < pf.length; k++) {
                level = Math.max(60, Math.min(420, level + random.nextInt(121) - 60));
                pf[k] = level;
            }
            out.add(new Course(
                    prefix + i,
                    i % 2 == 0 ? AdministrativeGender.MALE : AdministrativeGender.FEMALE,
                    (1945 + (i * 7) % 50) + "-0" + (1 + i % 9) + "-1" + (i % 10),
                    fio2s[i % 3],
                    pf));
        }
        return out;
    }

    /** The resources of a set of courses: Patient, height, support, then per gas FiO2, PEEP and PaO2. */
    static List<Resource> resources(List<Course> courses, Instant end) {
        List<Resource> out = new ArrayList<>();
        for (Course c : courses) {
            Instant start = end.minus(4L * (c.pf().length - 1), ChronoUnit.HOURS);
            Patient p = new Patient();
            p.setId(c.patientId());
            p.setGender(c.gender());
            p.setBirthDateElement(new org.hl7.fhir.r4.model.DateType(c.birthDate()));
            out.add(p);
            int n = 0;
            out.add(quantity(c.patientId(), n++, "8302-2", 172, "cm", start.minus(3, ChronoUnit.HOURS), false));
            out.add(support(c.patientId(), n++, start.minus(2, ChronoUnit.HOURS)));
            for (int k = 0; k < c.pf().length; k++) {
                Instant gas = start.plus(4L * k, ChronoUnit.HOURS);
                Instant set = gas.minus(40, ChronoUnit.MINUTES);
                out.add(quantity(c.patientId(), n++, "19994-3", c.fio2(), "1", set, true));
                out.add(quantity(c.patientId(), n++, "76248-4", 10, "cm[H2O]", set, true));
                double pao2 = Math.round(c.pf()[k] * c.fio2() * 1000) / 1000.0;
                out.add(quantity(c.patientId(), n++, "2703-7", pao2, "mm[Hg]", gas, false));
            }
        }
        return out;
    }

    static Observation quantity(
            String patientId, int n, String loinc, double value, String ucum, Instant at, boolean setting) {
        Observation o = new Observation();
        o.setId("obs-" + patientId + "-" + n);
        o.getMeta().setVersionId("1");
        o.setStatus(Observation.ObservationStatus.FINAL);
        o.setCode(new CodeableConcept(new Coding(LungflagFhir.CodeSystems.LOINC, loinc, null)));
        o.setSubject(new Reference("Patient/" + patientId));
        o.setEffective(new DateTimeType(Date.from(at)));
        o.setValue(new Quantity()
                .setValue(value)
                .setSystem(LungflagFhir.CodeSystems.UCUM)
                .setCode(ucum));
        if (setting) {
            o.addCategory(new CodeableConcept(new Coding(LungflagFhir.CodeSystems.VALUE_ROLE, "setting", null)));
        }
        return o;
    }

    static Observation support(String patientId, int n, Instant at) {
        Observation o = new Observation();
        o.setId("obs-" + patientId + "-" + n);
        o.getMeta().setVersionId("1");
        o.setStatus(Observation.ObservationStatus.FINAL);
        o.setCode(new CodeableConcept(new Coding(LungflagFhir.CodeSystems.INPUT_KIND, "respiratory-support", null)));
        o.setSubject(new Reference("Patient/" + patientId));
        o.setEffective(new DateTimeType(Date.from(at)));
        o.setValue(new CodeableConcept(
                new Coding(LungflagFhir.CodeSystems.RESPIRATORY_SUPPORT, "invasive-ventilation", null)));
        return o;
    }

    static List<String> ndjson(List<Resource> resources) {
        List<String> lines = new ArrayList<>();
        for (Resource r : resources) {
            lines.add(FHIR.newJsonParser().encodeResourceToString(r));
        }
        return lines;
    }

    static Path write(Path file, List<String> lines) throws IOException {
        Files.createDirectories(file.getParent());
        Files.write(file, lines);
        return file;
    }
}
