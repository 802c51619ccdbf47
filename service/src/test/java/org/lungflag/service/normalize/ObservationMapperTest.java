package org.lungflag.service.normalize;

import static org.assertj.core.api.Assertions.assertThat;

import ca.uhn.fhir.context.FhirContext;
import java.time.Duration;
import java.time.Instant;
import java.util.Optional;
import org.hl7.fhir.r4.model.Observation;
import org.junit.jupiter.api.Test;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.SupportMode;
import org.lungflag.rules.measure.SupportState;
import org.lungflag.rules.measure.ValueRole;
import org.lungflag.rules.quality.DataQualityReason;
import org.lungflag.service.conformance.ConformancePackage;
import org.lungflag.service.normalize.MappingOutcome.Refused;
import org.lungflag.service.normalize.MappingOutcome.Retracted;
import org.lungflag.service.normalize.MappingOutcome.Usable;
import org.lungflag.service.normalize.SpecimenLookup.SpecimenFacts;

/**
 * How FHIR Observations are read. Codes and their meanings are those clinical-reference §11 verified in named
 * public files (LOINC system axis for specimens, 2708-6 vs 59408-5 for SpO2, Specimen.type SNOMED codes §11.4).
 */
class ObservationMapperTest {

    private static final FhirContext FHIR = FhirContext.forR4Cached();
    private static final Instant NOW = Instant.parse("2026-11-30T12:00:00Z");
    private final ObservationMapper mapper =
            new ObservationMapper(CodeMap.fromPackage(ConformancePackage.load(FHIR)), Duration.ofMinutes(5));

    private static Observation parse(String json) {
        return FHIR.newJsonParser().parseResource(Observation.class, json);
    }

    private static String obs(String code, String extra) {
        return """
                {"resourceType":"Observation","id":"o1","meta":{"versionId":"3"},"status":"final",
                 "code":{"coding":[%s]},"subject":{"reference":"Patient/p1"},
                 "effectiveDateTime":"2026-11-30T03:10:00Z"%s}
                """.formatted(code, extra);
    }

    private static final String LOINC_PAO2 = "{\"system\":\"http://loinc.org\",\"code\":\"2703-7\"}";
    private static final String MMHG_80 =
            ",\"valueQuantity\":{\"value\":80,\"system\":\"http://unitsofmeasure.org\",\"code\":\"mm[Hg]\"}";

    private MappingOutcome map(String json) throws Exception {
        return mapper.map(parse(json), NOW, SpecimenLookup.NONE);
    }

    @Test
    void readsAnArterialPao2WithItsUnitAndTheVersionedSource() throws Exception {
        MappingOutcome outcome = map(obs(LOINC_PAO2, MMHG_80));
        assertThat(outcome).isInstanceOf(Usable.class);
        RawReading r = ((Usable) outcome).readings().get(0);
        assertThat(r.kind()).isEqualTo(QuantityKind.PAO2);
        assertThat(r.value()).isEqualTo(80.0);
        assertThat(r.unit()).isEqualTo("mm[Hg]");
        assertThat(r.specimen()).isEqualTo(SpecimenKind.ARTERIAL);
        assertThat(r.source().toString()).isEqualTo("Observation/o1/_history/3");
        assertThat(r.time()).isEqualTo(Instant.parse("2026-11-30T03:10:00Z"));
        assertThat(outcome.patientId()).isEqualTo("p1");
    }

    @Test
    void treats2708WithPulseOximetryCodingAsSpo2NotArterialSaturation() throws Exception {
        String codes = "{\"system\":\"http://loinc.org\",\"code\":\"2708-6\"},"
                + "{\"system\":\"http://loinc.org\",\"code\":\"59408-5\"}";
        Usable u = (Usable) map(obs(
                codes, ",\"valueQuantity\":{\"value\":92,\"system\":\"http://unitsofmeasure.org\",\"code\":\"%\"}"));
        assertThat(u.readings().get(0).kind()).isEqualTo(QuantityKind.SPO2);
    }

    @Test
    void treats2708AloneInTheVitalSignsCategoryAsSpo2() throws Exception {
        String json = obs(
                "{\"system\":\"http://loinc.org\",\"code\":\"2708-6\"}",
                ",\"category\":[{\"coding\":[{\"system\":\"http://terminology.hl7.org/CodeSystem/observation-category\",\"code\":\"vital-signs\"}]}]"
                        + ",\"valueQuantity\":{\"value\":92,\"system\":\"http://unitsofmeasure.org\",\"code\":\"%\"}");
        assertThat(((Usable) map(json)).readings().get(0).kind()).isEqualTo(QuantityKind.SPO2);
    }

    @Test
    void treats2708AloneAsArterialSaturationFromTheLab() throws Exception {
        String json = obs(
                "{\"system\":\"http://loinc.org\",\"code\":\"2708-6\"}",
                ",\"valueQuantity\":{\"value\":92,\"system\":\"http://unitsofmeasure.org\",\"code\":\"%\"}");
        Usable u = (Usable) map(json);
        assertThat(u.readings().get(0).kind()).isEqualTo(QuantityKind.SAO2);
        assertThat(u.readings().get(0).specimen()).isEqualTo(SpecimenKind.ARTERIAL);
    }

    @Test
    void letsAContainedVenousSpecimenOverrideAnUnspecifiedBloodCode() throws Exception {
        String json = obs(
                "{\"system\":\"http://loinc.org\",\"code\":\"11556-8\"}",
                MMHG_80 + ",\"contained\":[{\"resourceType\":\"Specimen\",\"id\":\"s1\",\"type\":{\"coding\":"
                        + "[{\"system\":\"http://snomed.info/sct\",\"code\":\"122555007\"}]},"
                        + "\"collection\":{\"collectedDateTime\":\"2026-11-30T03:05:00Z\"}}],"
                        + "\"specimen\":{\"reference\":\"#s1\"}");
        RawReading r = ((Usable) map(json)).readings().get(0);
        assertThat(r.specimen()).isEqualTo(SpecimenKind.VENOUS);
        assertThat(r.time())
                .as("specimen collection time anchors the sample")
                .isEqualTo(Instant.parse("2026-11-30T03:05:00Z"));
    }

    @Test
    void refusesASubjectWhoseIdIsNotAFhirIdWithoutRepeatingIt() throws Exception {
        // FHIR R4 id: 1-64 of A-Z a-z 0-9 - . (https://hl7.org/fhir/R4/datatypes.html#id)
        String json = obs(LOINC_PAO2, MMHG_80).replace("Patient/p1", "Patient/" + "x".repeat(65));
        Refused r = (Refused) map(json);
        assertThat(r.reason()).isEqualTo(DataQualityReason.MISSING_SUBJECT);
        assertThat(r.patientId()).isNull();
        assertThat(r.detail()).contains("not a valid FHIR id").doesNotContain("xxxx");
    }

    @Test
    void neverLooksUpASpecimenReferenceThatIsNoFhirId() throws Exception {
        String json = obs(
                "{\"system\":\"http://loinc.org\",\"code\":\"11556-8\"}",
                MMHG_80 + ",\"specimen\":{\"reference\":\"Specimen/a b\"}");
        SpecimenLookup lookup = ref -> {
            throw new AssertionError("looked up " + ref);
        };
        Usable u = (Usable) mapper.map(parse(json), NOW, lookup);
        assertThat(u.readings()).isNotEmpty();
    }

    @Test
    void resolvesAReferencedArterialSpecimen() throws Exception {
        String json = obs(
                "{\"system\":\"http://loinc.org\",\"code\":\"11556-8\"}",
                MMHG_80 + ",\"specimen\":{\"reference\":\"Specimen/s7\"}");
        SpecimenLookup lookup = ref -> ref.equals("Specimen/s7")
                ? Optional.of(new SpecimenFacts(SpecimenKind.ARTERIAL, null))
                : Optional.empty();
        Usable u = (Usable) mapper.map(parse(json), NOW, lookup);
        assertThat(u.readings().get(0).specimen()).isEqualTo(SpecimenKind.ARTERIAL);
    }

    @Test
    void keepsTheLoincSystemAxisWhenThereIsNoSpecimen() throws Exception {
        String json = obs("{\"system\":\"http://loinc.org\",\"code\":\"2705-2\"}", MMHG_80);
        assertThat(((Usable) map(json)).readings().get(0).specimen()).isEqualTo(SpecimenKind.VENOUS);
    }

    @Test
    void refusesAnUnknownCodeNamingTheCodings() throws Exception {
        Refused r = (Refused) map(obs("{\"system\":\"http://loinc.org\",\"code\":\"8867-4\"}", MMHG_80));
        assertThat(r.reason()).isEqualTo(DataQualityReason.UNKNOWN_CODE);
        assertThat(r.detail()).contains("http://loinc.org|8867-4");
    }

    @Test
    void refusesAnObservationWithoutAPatientSubject() throws Exception {
        String json = obs(LOINC_PAO2, MMHG_80).replace("\"subject\":{\"reference\":\"Patient/p1\"},", "");
        assertThat(((Refused) map(json)).reason()).isEqualTo(DataQualityReason.MISSING_SUBJECT);
        String group = obs(LOINC_PAO2, MMHG_80).replace("Patient/p1", "Group/g1");
        assertThat(((Refused) map(group)).detail()).contains("a Group");
    }

    @Test
    void refusesAPreliminaryResult() throws Exception {
        String json = obs(LOINC_PAO2, MMHG_80).replace("\"final\"", "\"preliminary\"");
        Refused r = (Refused) map(json);
        assertThat(r.reason()).isEqualTo(DataQualityReason.STATUS_NOT_USABLE);
        assertThat(r.detail()).contains("preliminary");
    }

    @Test
    void retractsAnEnteredInErrorResult() throws Exception {
        String json = obs(LOINC_PAO2, MMHG_80).replace("\"final\"", "\"entered-in-error\"");
        assertThat(map(json)).isInstanceOf(Retracted.class);
    }

    @Test
    void refusesAClinicalTimeInTheFuture() throws Exception {
        String json = obs(LOINC_PAO2, MMHG_80).replace("2026-11-30T03:10:00Z", "2026-12-30T03:10:00Z");
        assertThat(((Refused) map(json)).reason()).isEqualTo(DataQualityReason.FUTURE_TIME);
    }

    @Test
    void refusesAMissingClinicalTimeEvenWhenIssuedIsPresent() throws Exception {
        // issued is the release time, not the collection time (clinical-reference §10.3, trap 6)
        String json = obs(LOINC_PAO2, MMHG_80).replace("\"effectiveDateTime\"", "\"issued\"");
        assertThat(((Refused) map(json)).reason()).isEqualTo(DataQualityReason.MISSING_TIME);
    }

    @Test
    void refusesAMissingValue() throws Exception {
        assertThat(((Refused) map(obs(LOINC_PAO2, ""))).reason()).isEqualTo(DataQualityReason.MISSING_VALUE);
    }

    @Test
    void readsEveryMappedComponentOfABloodGasPanel() throws Exception {
        String json = obs(
                "{\"system\":\"http://loinc.org\",\"code\":\"24336-0\"}",
                ",\"component\":[{\"code\":{\"coding\":[{\"system\":\"http://loinc.org\",\"code\":\"2703-7\"}]},"
                        + "\"valueQuantity\":{\"value\":10.7,\"system\":\"http://unitsofmeasure.org\",\"code\":\"kPa\"}},"
                        + "{\"code\":{\"coding\":[{\"system\":\"http://loinc.org\",\"code\":\"2019-8\"}]},"
                        + "\"valueQuantity\":{\"value\":41,\"system\":\"http://unitsofmeasure.org\",\"code\":\"mm[Hg]\"}},"
                        + "{\"code\":{\"coding\":[{\"system\":\"http://loinc.org\",\"code\":\"2744-1\"}]}}]");
        Usable u = (Usable) map(json);
        assertThat(u.readings()).extracting(RawReading::kind).containsExactly(QuantityKind.PAO2, QuantityKind.PACO2);
        assertThat(u.readings().get(0).unit()).isEqualTo("kPa");
        assertThat(u.readings().get(0).part()).isEqualTo("component[0]");
        assertThat(u.refusedParts())
                .singleElement()
                .satisfies(p -> assertThat(p.reason()).isEqualTo(DataQualityReason.MISSING_VALUE));
    }

    @Test
    void takesTheSettingRoleFromTheCategoryOverTheCodeDefault() throws Exception {
        String json = obs(
                "{\"system\":\"http://loinc.org\",\"code\":\"76248-4\"}",
                ",\"category\":[{\"coding\":[{\"system\":\"http://lungflag.org/fhir/CodeSystem/value-role\",\"code\":\"setting\"}]}]"
                        + ",\"valueQuantity\":{\"value\":10,\"system\":\"http://unitsofmeasure.org\",\"code\":\"cm[H2O]\"}");
        RawReading r = ((Usable) map(json)).readings().get(0);
        assertThat(r.kind()).isEqualTo(QuantityKind.PEEP);
        assertThat(r.role()).isEqualTo(ValueRole.SETTING);
    }

    @Test
    void readsRespiratorySupportWithItsFlow() throws Exception {
        String json = obs(
                "{\"system\":\"http://lungflag.org/fhir/CodeSystem/input-kind\",\"code\":\"respiratory-support\"}",
                ",\"valueCodeableConcept\":{\"coding\":[{\"system\":\"http://lungflag.org/fhir/CodeSystem/respiratory-support\",\"code\":\"high-flow-nasal-oxygen\"}]},"
                        + "\"component\":[{\"code\":{\"coding\":[{\"system\":\"http://loinc.org\",\"code\":\"3151-8\"}]},"
                        + "\"valueQuantity\":{\"value\":40,\"system\":\"http://unitsofmeasure.org\",\"code\":\"L/min\"}}]");
        Usable u = (Usable) map(json);
        assertThat(u.states()).singleElement().isInstanceOfSatisfying(SupportState.class, s -> {
            assertThat(s.mode()).isEqualTo(SupportMode.HIGH_FLOW_NASAL_OXYGEN);
            assertThat(s.flowLitresPerMinute()).isEqualTo(40.0);
        });
        assertThat(u.readings()).extracting(RawReading::kind).containsExactly(QuantityKind.O2_FLOW);
    }

    @Test
    void passesANonUcumUnitSystemOnAsNoUnitSoTheNormalizerRefusesIt() throws Exception {
        String json = obs(
                LOINC_PAO2,
                ",\"valueQuantity\":{\"value\":80,\"system\":\"http://example.org/units\",\"code\":\"mmHg\"}");
        assertThat(((Usable) map(json)).readings().get(0).unit()).isNull();
    }

    /** The FHIR R4 id datatype's regex, as published in the R4 specification (datatypes.html#id). */
    private static final java.util.regex.Pattern R4_ID = java.util.regex.Pattern.compile("[A-Za-z0-9\\-\\.]{1,64}");

    @Test
    void acceptsExactlyTheIdsTheFhirR4IdRegexAccepts() {
        // FHIR R4 datatypes "id": [A-Za-z0-9\-\.]{1,64}; examples of our own, checked against the published regex
        for (String id : new String[] {"o1", "8812", "obs-0012.v2", "A-Z.a-z-0-9", "x".repeat(64)}) {
            assertThat(ObservationMapper.isFhirId(id)).as(id).isTrue();
            assertThat(R4_ID.matcher(id).matches()).as(id).isTrue();
        }
        for (String id : new String[] {"", "x".repeat(65), "o 1", "o_1", "o/1", "é1", "o1\n", "o1#"}) {
            assertThat(ObservationMapper.isFhirId(id)).as(id).isFalse();
            assertThat(R4_ID.matcher(id).matches()).as(id).isFalse();
        }
        assertThat(ObservationMapper.isFhirId(null)).isFalse();
        java.util.Random random = new java.util.Random(8);
        String alphabet = "aZ09-._/ #:\u00e9\u0000";
        for (int i = 0; i < 20_000; i++) {
            StringBuilder sb = new StringBuilder();
            int n = random.nextInt(70);
            for (int k = 0; k < n; k++) {
                sb.append(random.nextInt(8) == 0 ? alphabet.charAt(random.nextInt(alphabet.length())) : 'a');
            }
            String id = sb.toString();
            assertThat(ObservationMapper.isFhirId(id))
                    .as(id)
                    .isEqualTo(R4_ID.matcher(id).matches());
        }
    }
}
