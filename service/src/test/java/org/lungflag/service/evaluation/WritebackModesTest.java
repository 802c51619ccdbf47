package org.lungflag.service.evaluation;

import static org.assertj.core.api.Assertions.assertThat;

import ca.uhn.fhir.rest.client.api.IGenericClient;
import java.time.Instant;
import java.time.LocalDate;
import java.time.temporal.ChronoUnit;
import java.util.List;
import java.util.UUID;
import org.hl7.fhir.r4.model.Bundle;
import org.hl7.fhir.r4.model.Flag;
import org.hl7.fhir.r4.model.Observation;
import org.junit.jupiter.api.Nested;
import org.junit.jupiter.api.Test;
import org.lungflag.fhir.profiles.LungflagFhir;
import org.lungflag.rules.measure.ClinicalFact;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.OriginalQuantity;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.SupportMode;
import org.lungflag.rules.measure.SupportState;
import org.lungflag.rules.measure.ValueRole;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.patient.Sex;
import org.lungflag.service.e2e.SandboxServer;
import org.lungflag.service.normalize.NormalizedResource;
import org.lungflag.service.writeback.OutboxDeliverer;
import org.lungflag.service.writeback.OutboxRepository;
import org.lungflag.service.writeback.OutboxStatus;
import org.springframework.beans.factory.annotation.Autowired;
import org.springframework.boot.test.context.SpringBootTest;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.test.annotation.DirtiesContext;
import org.springframework.test.context.ActiveProfiles;
import org.springframework.test.context.DynamicPropertyRegistry;
import org.springframework.test.context.DynamicPropertySource;
import org.springframework.test.context.TestPropertySource;

/**
 * The write-back modes of design.md: {@code flags-and-indices} also writes the derived-index Observations (P/F with
 * LOINC 50984-4, derivedFrom the inputs), and a rule in silent mode is evaluated and audited but writes nothing.
 * P/F = 80 / 0.50 = 160 mmHg (clinical-reference worked example 2C; Berlin moderate). Data invented; the Observations
 * the indices derive from are created on the embedded server first so the references resolve.
 */
class WritebackModesTest {

    static Measurement m(QuantityKind kind, double value, String unit, Instant at, ValueRole role, SourceRef src) {
        SpecimenKind specimen = kind.isBloodSample() ? SpecimenKind.ARTERIAL : SpecimenKind.NOT_APPLICABLE;
        return new Measurement(kind, value, at, role, specimen, src, new OriginalQuantity(value, unit), List.of());
    }

    static Work work(SourceRef src, ClinicalFact fact) {
        return new Work(
                null, new NormalizedResource(src, null, List.of(fact), List.of(), false), "TEST", null, fact.time());
    }

    /** Creates stand-in Observations on the server (so references resolve) and returns the work for a P/F of 160. */
    static List<Work> moderate(IGenericClient fhir, String patientId, Instant t0) {
        org.hl7.fhir.r4.model.Patient patient = new org.hl7.fhir.r4.model.Patient();
        patient.setId(patientId);
        fhir.update().resource(patient).execute();

        SourceRef support = stored(fhir);
        SourceRef fio2 = stored(fhir);
        SourceRef peep = stored(fhir);
        SourceRef pao2 = stored(fhir);
        return List.of(
                work(
                        support,
                        new SupportState(
                                SupportMode.INVASIVE_VENTILATION, null, t0.minus(2, ChronoUnit.HOURS), support)),
                work(fio2, m(QuantityKind.FIO2, 0.5, "1", t0.minus(30, ChronoUnit.MINUTES), ValueRole.SETTING, fio2)),
                work(
                        peep,
                        m(QuantityKind.PEEP, 8, "cm[H2O]", t0.minus(30, ChronoUnit.MINUTES), ValueRole.SETTING, peep)),
                work(pao2, m(QuantityKind.PAO2, 80, "mm[Hg]", t0, ValueRole.MEASUREMENT, pao2)));
    }

    private static SourceRef stored(IGenericClient fhir) {
        Observation o = new Observation();
        o.setStatus(Observation.ObservationStatus.FINAL);
        o.getCode().setText("stand-in");
        var id = fhir.create().resource(o).execute().getId();
        return SourceRef.observation(id.getIdPart(), id.getVersionIdPart());
    }

    static PatientFacts patient(String id) {
        return new PatientFacts(id, Sex.FEMALE, LocalDate.of(1966, 9, 1));
    }

    static IGenericClient client() {
        return SandboxServer.server()
                .fhirContext()
                .newRestfulGenericClient(SandboxServer.server().baseUrl());
    }

    abstract static class WithSandbox {
        @DynamicPropertySource
        static void sandbox(DynamicPropertyRegistry registry) {
            SandboxServer.register(registry);
        }

        @Autowired
        PatientProcessor processor;

        @Autowired
        OutboxDeliverer deliverer;

        @Autowired
        OutboxRepository outbox;

        @Autowired
        JdbcClient jdbc;
    }

    @Nested
    @DirtiesContext(classMode = DirtiesContext.ClassMode.AFTER_CLASS)
    @SpringBootTest
    @ActiveProfiles("test")
    @TestPropertySource(
            properties = {
                "lungflag.writeback.mode=flags-and-indices",
                "lungflag.intake.register-subscriptions=false",
                "lungflag.evaluation.processor-enabled=false",
                "lungflag.writeback.poll-interval=1h"
            })
    class FlagsAndIndices extends WithSandbox {

        @Test
        void writesTheDerivedIndexObservationsBesideTheFlag() {
            String p = "modes-" + UUID.randomUUID().toString().substring(0, 8);
            IGenericClient fhir = client();
            Instant t0 = Instant.now().minus(4, ChronoUnit.HOURS).truncatedTo(ChronoUnit.SECONDS);
            processor.apply(p, patient(p), moderate(fhir, p, t0));
            while (deliverer.deliverBatch() > 0) {
                // drain
            }
            Bundle indices = fhir.search()
                    .forResource(Observation.class)
                    .where(Observation.SUBJECT.hasId("Patient/" + p))
                    .and(Observation.CODE.exactly().systemAndCode(LungflagFhir.CodeSystems.INDEX, "pf-ratio"))
                    .returnBundle(Bundle.class)
                    .execute();
            assertThat(indices.getEntry()).singleElement().satisfies(e -> {
                Observation o = (Observation) e.getResource();
                assertThat(o.getValueQuantity().getValue().doubleValue()).isEqualTo(160.0);
                assertThat(o.getValueQuantity().getCode()).isEqualTo("mm[Hg]");
                assertThat(o.getCode().getCoding())
                        .anySatisfy(c -> assertThat(c.getCode()).isEqualTo("50984-4"));
                assertThat(o.getDerivedFrom()).isNotEmpty();
                assertThat(o.getIdentifierFirstRep().getSystem()).isEqualTo(LungflagFhir.Identifiers.DERIVED_INDEX);
            });
            assertThat(outbox.count(OutboxStatus.QUARANTINED)).isZero();
        }
    }

    @Nested
    @DirtiesContext(classMode = DirtiesContext.ClassMode.AFTER_CLASS)
    @SpringBootTest
    @ActiveProfiles("test")
    @TestPropertySource(
            properties = {
                "lungflag.writeback.mode=flags",
                "lungflag.writeback.silent-rules=hypoxemia",
                "lungflag.intake.register-subscriptions=false",
                "lungflag.evaluation.processor-enabled=false",
                "lungflag.writeback.poll-interval=1h"
            })
    class SilentRule extends WithSandbox {

        @Test
        void aSilentRuleIsEvaluatedAndAuditedButWritesNothing() {
            String p = "silent-" + UUID.randomUUID().toString().substring(0, 8);
            IGenericClient fhir = client();
            Instant t0 = Instant.now().minus(4, ChronoUnit.HOURS).truncatedTo(ChronoUnit.SECONDS);
            processor.apply(p, patient(p), moderate(fhir, p, t0));
            while (deliverer.deliverBatch() > 0) {
                // drain
            }
            assertThat(jdbc.sql("SELECT DISTINCT mode FROM evaluation WHERE patient_id = :p AND rule_id = 'hypoxemia'")
                            .param("p", p)
                            .query(String.class)
                            .list())
                    .containsExactly("SILENT");
            assertThat(jdbc.sql("SELECT status FROM outbox WHERE patient_id = :p")
                            .param("p", p)
                            .query(String.class)
                            .list())
                    .containsExactly("SUPPRESSED");
            Bundle flags = fhir.search()
                    .forResource(Flag.class)
                    .where(Flag.PATIENT.hasId("Patient/" + p))
                    .returnBundle(Bundle.class)
                    .execute();
            assertThat(flags.getEntry()).isEmpty();
        }
    }
}
