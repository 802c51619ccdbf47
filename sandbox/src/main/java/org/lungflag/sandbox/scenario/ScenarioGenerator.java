package org.lungflag.sandbox.scenario;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.parser.IParser;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.math.BigDecimal;
import java.math.RoundingMode;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.Date;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Random;
import java.util.TimeZone;
import org.hl7.fhir.r4.model.CodeableConcept;
import org.hl7.fhir.r4.model.Coding;
import org.hl7.fhir.r4.model.DateTimeType;
import org.hl7.fhir.r4.model.DateType;
import org.hl7.fhir.r4.model.DecimalType;
import org.hl7.fhir.r4.model.Encounter;
import org.hl7.fhir.r4.model.Enumerations.AdministrativeGender;
import org.hl7.fhir.r4.model.Identifier;
import org.hl7.fhir.r4.model.Narrative;
import org.hl7.fhir.r4.model.Observation;
import org.hl7.fhir.r4.model.Patient;
import org.hl7.fhir.r4.model.Period;
import org.hl7.fhir.r4.model.Quantity;
import org.hl7.fhir.r4.model.Reference;
import org.hl7.fhir.r4.model.Resource;
import org.hl7.fhir.r4.model.Specimen;
import org.hl7.fhir.utilities.xhtml.XhtmlNode;
import org.lungflag.sandbox.scenario.Course.PressureUnit;

/**
 * Writes the invented demo ICU scenario as FHIR R4 NDJSON, one file per resource type as a Bulk Data export would
 * ({@code Patient.ndjson}, {@code Encounter.ndjson}, {@code Specimen.ndjson}, {@code Observation.ndjson}), plus
 * {@code expected-advisories.csv} (what the rule engine should raise, derived from the design of each course) and
 * {@code scenario.properties} (seed, nominal start, length).
 *
 * <p>Seeded: the same seed gives byte-identical files ({@code ScenarioDriftTest} checks the committed copy under
 * {@code src/main/resources/scenario/}). Regenerate with {@code java -jar sandbox/target/lungflag-sandbox-exec.jar
 * generate --out sandbox/src/main/resources/scenario}.
 *
 * <p>Times: the scenario starts at {@link #NOMINAL_START} (hour 0) and lasts {@link #LENGTH}; admissions and
 * intubations lie up to 2 h before hour 0. The player shifts every time so that the scenario ends "now".
 *
 * <p>Charting habits (common practice, no source): a ventilator check every 2 h on the even hour, charted a few
 * minutes late (FiO2, PEEP and set tidal volume; measured tidal volume, rate, minute ventilation and mean airway
 * pressure; plateau and peak pressure every 4 h after an inspiratory hold); SpO2 at about half past every hour, now and then
 * not charted; arterial blood gases 15-25 min after a check, every 4-6 h; the respiratory support charted every 12 h;
 * height and weight on admission. Measured values carry a few percent of seeded noise and are rounded as a
 * monitor or analyser would.
 */
public final class ScenarioGenerator {

    /** The seed of the committed scenario. */
    public static final long DEFAULT_SEED = 20_260_112L;

    /** Hour 0 of the scenario in its files; the player shifts it. */
    public static final Instant NOMINAL_START = Instant.parse("2026-01-12T06:00:00Z");

    public static final Duration LENGTH = Duration.ofHours(72);

    static final String HOSPITAL = "Saltmarsh General Hospital (invented)";
    static final String MRN_SYSTEM = "http://saltmarsh-general.example.org/fhir/sid/mrn";
    static final String ENCOUNTER_SYSTEM = "http://saltmarsh-general.example.org/fhir/sid/encounter";
    static final String ACCESSION_SYSTEM = "http://saltmarsh-general.example.org/fhir/sid/lab-accession";

    static final String LOINC = "http://loinc.org";
    static final String MDC = "urn:iso:std:iso:11073:10101";
    static final String SNOMED = "http://snomed.info/sct";
    static final String UCUM = "http://unitsofmeasure.org";
    static final String CATEGORY = "http://terminology.hl7.org/CodeSystem/observation-category";
    static final String INPUT_KIND = "http://lungflag.org/fhir/CodeSystem/input-kind";
    static final String RESPIRATORY_SUPPORT = "http://lungflag.org/fhir/CodeSystem/respiratory-support";
    static final String BODY_POSITION = "http://lungflag.org/fhir/CodeSystem/body-position";
    static final String VALUE_ROLE = "http://lungflag.org/fhir/CodeSystem/value-role";

    /** kPa per mmHg (UCUM: 1 mm[Hg] = 133.3220 Pa). */
    private static final double KPA_PER_MMHG = 0.133322;

    private final FhirContext fhir;

    public ScenarioGenerator() {
        this(FhirContext.forR4Cached());
    }

    public ScenarioGenerator(FhirContext fhir) {
        this.fhir = fhir;
    }

    /** The generated files by name, in a fixed order. */
    public Map<String, String> generate(long seed) {
        List<Resource> patients = new ArrayList<>();
        List<Resource> encounters = new ArrayList<>();
        List<Resource> specimens = new ArrayList<>();
        List<Observation> observations = new ArrayList<>();
        List<Course> courses = DemoPatients.all();
        for (int i = 0; i < courses.size(); i++) {
            Course course = courses.get(i);
            PatientChart chart = new PatientChart(course, new Random(seed * 1_000_003L + i));
            chart.write();
            patients.add(chart.patient);
            encounters.add(chart.encounter);
            specimens.addAll(chart.specimens);
            observations.addAll(chart.observations);
        }
        observations.sort(Comparator.comparing(
                        (Observation o) -> o.getEffectiveDateTimeType().getValue())
                .thenComparing(o -> o.getIdElement().getIdPart()));
        IParser parser = fhir.newJsonParser().setPrettyPrint(false);
        Map<String, String> files = new LinkedHashMap<>();
        files.put("Patient.ndjson", ndjson(parser, patients));
        files.put("Encounter.ndjson", ndjson(parser, encounters));
        files.put("Specimen.ndjson", ndjson(parser, specimens));
        files.put("Observation.ndjson", ndjson(parser, observations));
        files.put(ExpectedAdvisories.FILE, ExpectedAdvisories.csv());
        files.put(
                "scenario.properties",
                "# Generated by org.lungflag.sandbox.scenario.ScenarioGenerator; do not edit (see DEVELOPERS.md,"
                        + " \"Demo scenario\").\n"
                        + "seed=" + seed + "\n"
                        + "start=" + NOMINAL_START + "\n"
                        + "hours=" + LENGTH.toHours() + "\n"
                        + "patients=" + patients.size() + "\n"
                        + "observations=" + observations.size() + "\n");
        return files;
    }

    /** Writes the files into {@code directory} (created if missing), replacing what is there. */
    public void write(long seed, Path directory) {
        try {
            Files.createDirectories(directory);
            for (Map.Entry<String, String> file : generate(seed).entrySet()) {
                Files.writeString(directory.resolve(file.getKey()), file.getValue(), StandardCharsets.UTF_8);
            }
        } catch (IOException e) {
            throw new UncheckedIOException("cannot write the scenario to " + directory + ": " + e.getMessage(), e);
        }
    }

    private static String ndjson(IParser parser, List<? extends Resource> resources) {
        StringBuilder sb = new StringBuilder();
        for (Resource r : resources) {
            sb.append(parser.encodeResourceToString(r)).append('\n');
        }
        return sb.toString();
    }

    /** One patient's chart: builds the resources of a course in clinical order with seeded noise. */
    private final class PatientChart {

        private final Course c;
        private final Random random;
        final Patient patient = new Patient();
        final Encounter encounter = new Encounter();
        final List<Specimen> specimens = new ArrayList<>();
        final List<Observation> observations = new ArrayList<>();
        private int sequence;

        PatientChart(Course course, Random random) {
            this.c = course;
            this.random = random;
        }

        void write() {
            writePatient();
            writeEncounter();
            double admitted = -2 + minutes(0, 20);
            if (c.heightCm != null) {
                quantity(admitted, vital(), code(LOINC, "8302-2", "Body height"), c.heightCm, "cm", "cm");
            }
            quantity(admitted + minutes(1, 5), vital(), code(LOINC, "29463-7", "Body weight"), c.weightKg, "kg", "kg");
            for (double h = -1; h < 72; h += 12) {
                support(h + minutes(0, 10));
            }
            c.positions.forEach((hour, position) -> position(hour + minutes(0, 10), position));
            for (int h = 0; h < 72; h += 2) {
                if (!c.missedVentilatorChecks.contains(h)) {
                    ventilatorCheck(h, h + minutes(1, 8));
                }
            }
            for (int h = 0; h < 72; h++) {
                if (random.nextDouble() < 0.06) {
                    continue; // not charted this hour
                }
                spo2(h + 0.5 + minutes(0, 10)); // after a gas drawn at 15-25 min past the hour
            }
            int gasNumber = 0;
            for (double hour : c.gasHours) {
                boolean onCheck = hour == Math.rint(hour);
                double at = onCheck ? hour + minutes(15, 25) : hour + minutes(0, 4);
                bloodGas(++gasNumber, at, false);
            }
            if (c.venousGasHour != null) {
                bloodGas(++gasNumber, c.venousGasHour + minutes(0, 4), true);
            }
            observations.sort(
                    Comparator.comparing(o -> o.getEffectiveDateTimeType().getValue()));
            for (Observation o : observations) {
                o.setId(c.id + "-" + String.format("%04d", ++sequence));
            }
        }

        private void writePatient() {
            patient.setId(c.id);
            patient.setText(narrative("Invented demo patient of " + HOSPITAL + ", ICU bed " + c.bed + ": " + c.given
                    + " " + c.family + " (" + c.story + ")."));
            patient.addIdentifier(
                    new Identifier().setSystem(MRN_SYSTEM).setValue("SGH-DEMO-" + String.format("%04d", c.bed)));
            patient.addName().setFamily(c.family).addGiven(c.given);
            patient.setGender(c.sex == Course.Sex.MALE ? AdministrativeGender.MALE : AdministrativeGender.FEMALE);
            patient.setBirthDateElement(new DateType(c.birthDate.toString()));
            patient.setManagingOrganization(new Reference().setDisplay(HOSPITAL));
        }

        private void writeEncounter() {
            encounter.setId(c.id + "-icu");
            encounter.setText(narrative("Intensive care stay, bed " + c.bed + " (invented)."));
            encounter.addIdentifier(
                    new Identifier().setSystem(ENCOUNTER_SYSTEM).setValue("SGH-ICU-" + String.format("%04d", c.bed)));
            encounter.setStatus(Encounter.EncounterStatus.INPROGRESS);
            encounter.setClass_(
                    new Coding("http://terminology.hl7.org/CodeSystem/v3-ActCode", "IMP", "inpatient encounter"));
            encounter.setSubject(new Reference("Patient/" + c.id));
            encounter.setPeriod(new Period().setStartElement(dateTime(-3)));
            encounter.addLocation().setLocation(new Reference().setDisplay("Intensive care unit, bed " + c.bed));
            encounter.setServiceProvider(new Reference().setDisplay(HOSPITAL));
        }

        private void ventilatorCheck(int hour, double at) {
            double fio2 = c.fio2.at(hour);
            double peep = c.peep.at(hour);
            double vt = c.vtSet.at(hour);
            double rr = c.rrSet.at(hour);
            if (c.fio2FractionAsPercentHour != null && c.fio2FractionAsPercentHour == hour) {
                // charting slip: the fraction typed into a field whose unit is percent
                quantity(at, setting(), fio2Code(), round(fio2, 2), "%", "%");
            } else if (c.fio2InPercent) {
                quantity(at, setting(), fio2Code(), Math.round(fio2 * 100), "%", "%");
            } else {
                quantity(at, setting(), fio2Code(), round(fio2, 2), "1", "1");
            }
            quantity(
                    at,
                    setting(),
                    device("76248-4", "PEEP Respiratory system --on ventilator", "151976"),
                    peep,
                    "cmH2O",
                    "cm[H2O]");
            quantity(at, setting(), device("20112-9", "Tidal volume setting Ventilator", "16929196"), vt, "mL", "mL");
            double vtMeasured = Math.round(vt * (1 + gaussian(0.02)));
            double rrMeasured = rr + (random.nextDouble() < 0.3 ? 1 : 0);
            quantity(
                    at,
                    measurement(),
                    device("76222-9", "Tidal volume Ventilator --on ventilator", "151980"),
                    vtMeasured,
                    "mL",
                    "mL");
            quantity(
                    at,
                    measurement(),
                    device("19840-8", "Breath rate spontaneous and mechanical --on ventilator", "152490"),
                    rrMeasured,
                    "/min",
                    "/min");
            quantity(
                    at,
                    measurement(),
                    device("76009-0", "Inspired minute Volume during Mechanical ventilation", "152004"),
                    round(vtMeasured * rrMeasured / 1000.0, 1),
                    "L/min",
                    "L/min");
            double plateau = peep + vt / c.compliance.at(hour);
            double map = c.meanAirwayPressure != null ? c.meanAirwayPressure.at(hour) : peep + 0.45 * (plateau - peep);
            quantity(
                    at,
                    measurement(),
                    device("76530-5", "Mean pressure Respiratory system airway --on ventilator", "151975"),
                    round(map + gaussian(0.4), 0),
                    "cmH2O",
                    "cm[H2O]");
            if (hour % 4 == 0) {
                double plateauCharted = Math.round(plateau + gaussian(0.5));
                quantity(at, measurement(), plateauCode(), plateauCharted, "cmH2O", "cm[H2O]");
                quantity(
                        at,
                        measurement(),
                        device("76531-3", "Pressure.max Respiratory system airway --on" + " ventilator", "151957"),
                        plateauCharted + 4 + random.nextInt(4),
                        "cmH2O",
                        "cm[H2O]");
            }
        }

        private CodeableConcept fio2Code() {
            return code(LOINC, "19994-3", "Oxygen/Total gas setting [Volume Fraction] Ventilator");
        }

        private CodeableConcept plateauCode() {
            if (c.mdcOnly) {
                return code(MDC, "152424", "Pressure in airway in plateau phase during mechanical ventilation");
            }
            return device("76259-1", "Pressure.plateau Respiratory system airway --on ventilator", "152424");
        }

        /** LOINC, plus the MDC code when the bed's ventilator reports through the device gateway. */
        private CodeableConcept device(String loinc, String display, String mdc) {
            CodeableConcept cc = code(LOINC, loinc, display);
            if (c.deviceGateway) {
                cc.addCoding(new Coding(MDC, mdc, null));
            }
            return cc;
        }

        private void spo2(double at) {
            double pao2 = pao2At(at);
            double saturation = Math.min(100, Math.round(severinghaus(pao2) + gaussian(0.8)));
            CodeableConcept code = code(LOINC, "59408-5", "Oxygen saturation in Arterial blood by Pulse oximetry");
            code.addCoding(new Coding(MDC, "150456", "MDC_PULS_OXIM_SAT_O2"));
            quantity(at, vital(), code, saturation, "%", "%");
        }

        private void bloodGas(int number, double at, boolean venous) {
            Specimen s = new Specimen();
            s.setId(c.id + "-gas-" + String.format("%02d", number));
            s.setAccessionIdentifier(new Identifier()
                    .setSystem(ACCESSION_SYSTEM)
                    .setValue("SGH-BG-" + String.format("%04d", c.bed) + "-" + String.format("%02d", number)));
            s.setStatus(Specimen.SpecimenStatus.AVAILABLE);
            s.setType(
                    venous
                            ? code(SNOMED, "122555007", "Venous blood specimen")
                            : code(SNOMED, "122552005", "Arterial blood specimen"));
            s.setSubject(new Reference("Patient/" + c.id));
            s.getCollection().setCollected(dateTime(at));
            specimens.add(s);
            Reference specimen = new Reference("Specimen/" + s.getIdElement().getIdPart());

            double pao2 = venous ? 36 + gaussian(2) : pao2At(at) * (1 + gaussian(0.04));
            double paco2 = venous ? c.paco2.at(at) + 6 + gaussian(1.0) : c.paco2.at(at) * (1 + gaussian(0.03));
            double bicarbonate = c.bicarbonate.at(at) + gaussian(0.5);
            double ph = 6.1 + Math.log10(bicarbonate / (0.0307 * paco2));
            CodeableConcept o2 = venous
                    ? code(LOINC, "11556-8", "Oxygen [Partial pressure] in Blood")
                    : code(LOINC, "2703-7", "Oxygen [Partial pressure] in Arterial blood");
            CodeableConcept co2 = venous
                    ? code(LOINC, "11557-6", "Carbon dioxide [Partial pressure] in Blood")
                    : code(LOINC, "2019-8", "Carbon dioxide [Partial pressure] in Arterial blood");
            CodeableConcept phCode =
                    venous ? code(LOINC, "11558-4", "pH of Blood") : code(LOINC, "2744-1", "pH of Arterial blood");
            gasTension(at, o2, pao2, specimen);
            gasTension(at, co2, paco2, specimen);
            quantity(at, lab(), phCode, round(ph, 2), "[pH]", "[pH]").setSpecimen(specimen);
            if (!venous) {
                double sao2 = Math.min(100, severinghaus(pao2) + gaussian(0.3));
                quantity(
                                at,
                                lab(),
                                code(LOINC, "2708-6", "Oxygen saturation in Arterial blood"),
                                round(sao2, 1),
                                "%",
                                "%")
                        .setSpecimen(specimen);
            }
        }

        private void gasTension(double at, CodeableConcept code, double mmHg, Reference specimen) {
            Observation o = c.labUnit == PressureUnit.KPA
                    ? quantity(at, lab(), code, round(mmHg * KPA_PER_MMHG, 1), "kPa", "kPa")
                    : quantity(at, lab(), code, Math.round(mmHg), "mmHg", "mm[Hg]");
            o.setSpecimen(specimen);
        }

        /** The design PaO2 at an hour: from the P/F target and the FiO2 in force, or from the OI target. */
        private double pao2At(double hour) {
            double fio2 = c.fio2.at(hour);
            if (c.oi != null) {
                return fio2 * c.meanAirwayPressure.at(hour) * 100 / c.oi.at(hour);
            }
            return c.pf.at(hour) * fio2;
        }

        private void support(double at) {
            CodeableConcept code = code(INPUT_KIND, "respiratory-support", "Respiratory support");
            code.addCoding(new Coding(SNOMED, "40617009", "Artificial ventilation"));
            Observation o = observation(at, List.of(), code);
            o.setValue(code(RESPIRATORY_SUPPORT, "invasive-ventilation", "Invasive ventilation"));
        }

        private void position(double at, String position) {
            Observation o = observation(at, List.of(), code(INPUT_KIND, "body-position", "Body position"));
            o.setValue(code(BODY_POSITION, position, position.substring(0, 1).toUpperCase() + position.substring(1)));
        }

        private Observation quantity(
                double at,
                List<CodeableConcept> category,
                CodeableConcept code,
                double value,
                String unit,
                String ucum) {
            Observation o = observation(at, category, code);
            BigDecimal number = BigDecimal.valueOf(value).stripTrailingZeros();
            if (number.scale() < 0) {
                number = number.setScale(0);
            }
            o.setValue(new Quantity()
                    .setValueElement(new DecimalType(number))
                    .setUnit(unit)
                    .setSystem(UCUM)
                    .setCode(ucum));
            return o;
        }

        private Observation observation(double at, List<CodeableConcept> category, CodeableConcept code) {
            Observation o = new Observation();
            o.setStatus(Observation.ObservationStatus.FINAL);
            category.forEach(o::addCategory);
            o.setCode(code);
            o.setSubject(new Reference("Patient/" + c.id));
            o.setEncounter(new Reference("Encounter/" + c.id + "-icu"));
            o.setEffective(dateTime(at));
            observations.add(o);
            return o;
        }

        private List<CodeableConcept> vital() {
            return List.of(code(CATEGORY, "vital-signs", "Vital Signs"));
        }

        private List<CodeableConcept> lab() {
            return List.of(code(CATEGORY, "laboratory", "Laboratory"));
        }

        private List<CodeableConcept> setting() {
            return c.deviceGateway ? List.of(code(VALUE_ROLE, "setting", "Setting")) : List.of();
        }

        private List<CodeableConcept> measurement() {
            return c.deviceGateway ? List.of(code(VALUE_ROLE, "measurement", "Measurement")) : List.of();
        }

        /** A whole number of minutes drawn evenly from [from, to], as hours. */
        private double minutes(int from, int to) {
            return (from + random.nextInt(to - from + 1)) / 60.0;
        }

        private double gaussian(double sigma) {
            return random.nextGaussian() * sigma;
        }
    }

    /** SpO2 in % from PaO2 in mmHg (Severinghaus JW, J Appl Physiol 1979;46:599-602, clinical-reference §3). */
    static double severinghaus(double pao2) {
        return 100.0 / (23_400.0 / (pao2 * pao2 * pao2 + 150.0 * pao2) + 1.0);
    }

    /** Hour offsets become times on the nominal start, to the minute. */
    static DateTimeType dateTime(double hour) {
        long minutes = Math.round(hour * 60);
        DateTimeType t = new DateTimeType(
                Date.from(NOMINAL_START.plus(Duration.ofMinutes(minutes))),
                ca.uhn.fhir.model.api.TemporalPrecisionEnum.SECOND,
                TimeZone.getTimeZone("UTC"));
        return t;
    }

    static double round(double value, int decimals) {
        return BigDecimal.valueOf(value)
                .setScale(decimals, RoundingMode.HALF_UP)
                .doubleValue();
    }

    static CodeableConcept code(String system, String code, String display) {
        return new CodeableConcept(new Coding(system, code, display));
    }

    static Narrative narrative(String text) {
        Narrative n = new Narrative();
        n.setStatus(Narrative.NarrativeStatus.GENERATED);
        XhtmlNode div = new XhtmlNode(org.hl7.fhir.utilities.xhtml.NodeType.Element, "div");
        div.addTag("p").addText(text);
        n.setDiv(div);
        return n;
    }
}
