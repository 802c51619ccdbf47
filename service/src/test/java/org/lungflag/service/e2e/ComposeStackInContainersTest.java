package org.lungflag.service.e2e;

import static org.assertj.core.api.Assertions.assertThat;
import static org.awaitility.Awaitility.await;
import static org.lungflag.service.e2e.FhirFixtures.loinc;
import static org.lungflag.service.e2e.FhirFixtures.patient;
import static org.lungflag.service.e2e.FhirFixtures.setting;
import static org.lungflag.service.e2e.FhirFixtures.support;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.rest.client.api.IGenericClient;
import ca.uhn.fhir.rest.client.api.ServerValidationModeEnum;
import java.time.Duration;
import java.time.Instant;
import java.time.temporal.ChronoUnit;
import java.util.List;
import org.hl7.fhir.r4.model.Bundle;
import org.hl7.fhir.r4.model.Enumerations.AdministrativeGender;
import org.hl7.fhir.r4.model.Flag;
import org.hl7.fhir.r4.model.Provenance;
import org.hl7.fhir.r4.model.Reference;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.lungflag.fhir.profiles.LungflagFhir;
import org.lungflag.service.LungflagApplication;
import org.springframework.boot.builder.SpringApplicationBuilder;
import org.springframework.context.ConfigurableApplicationContext;
import org.testcontainers.Testcontainers;
import org.testcontainers.containers.GenericContainer;
import org.testcontainers.containers.Network;
import org.testcontainers.containers.PostgreSQLContainer;

/**
 * The compose stack's pieces with Lungflag itself in this JVM: the HAPI FHIR image on PostgreSQL and Lungflag on
 * the compose file's PostgreSQL image. A blood gas charted on the real image becomes a Flag with Provenance that cite
 * the exact Observation version. Runs where a Docker engine answers; skipped where none does.
 *
 * <p>Berlin definition (ARDS Definition Task Force, JAMA 2012, clinical-reference §2.2 [PUB-2]): PaO2 80 mmHg at
 * FiO2 0.50 with PEEP 10 cmH2O is P/F 160, the moderate band. The patient is invented.
 */
@org.testcontainers.junit.jupiter.Testcontainers(disabledWithoutDocker = true)
class ComposeStackInContainersTest {

    static Network network;
    static PostgreSQLContainer<?> fhirDb;
    static GenericContainer<?> fhirServer;
    static PostgreSQLContainer<?> lungflagDb;
    static ConfigurableApplicationContext lungflag;
    static IGenericClient fhir;

    @BeforeAll
    static void start() {
        network = Network.newNetwork();
        fhirDb = ContainerImages.fhirDatabase(network);
        fhirDb.start();
        fhirServer = ContainerImages.fhirServer(network);
        fhirServer.start();
        lungflagDb = ContainerImages.lungflagDatabase();
        lungflagDb.start();
        int port = SandboxServer.freePort();
        Testcontainers.exposeHostPorts(port);
        lungflag = new SpringApplicationBuilder(LungflagApplication.class)
                .run(
                        "--server.port=" + port,
                        "--spring.datasource.url=" + lungflagDb.getJdbcUrl(),
                        "--spring.datasource.username=" + lungflagDb.getUsername(),
                        "--spring.datasource.password=" + lungflagDb.getPassword(),
                        "--lungflag.fhir.base-url=" + ContainerImages.fhirBaseUrl(fhirServer),
                        "--lungflag.intake.public-url=http://host.testcontainers.internal:" + port,
                        "--lungflag.intake.hook-token=container-test-token");
        FhirContext ctx = FhirContext.forR4Cached();
        ctx.getRestfulClientFactory().setServerValidationMode(ServerValidationModeEnum.NEVER);
        fhir = ctx.newRestfulGenericClient(ContainerImages.fhirBaseUrl(fhirServer));
    }

    @AfterAll
    static void stop() {
        if (lungflag != null) {
            lungflag.close();
        }
        for (var c : new org.testcontainers.lifecycle.Startable[] {fhirServer, fhirDb, lungflagDb}) {
            if (c != null) {
                c.stop();
            }
        }
        if (network != null) {
            network.close();
        }
    }

    @Test
    void aBloodGasOnTheRealImageBecomesAFlagWithProvenanceCitingItsExactVersion() {
        await().atMost(Duration.ofSeconds(90))
                .until(() -> lungflag.getBean(org.lungflag.service.intake.SubscriptionRegistrar.class)
                        .registered());
        String p = "stack-1";
        fhir.update()
                .resource(patient(p, AdministrativeGender.MALE, "1959-02-03"))
                .execute();
        Instant t0 = Instant.now().minus(6, ChronoUnit.HOURS).truncatedTo(ChronoUnit.MINUTES);
        fhir.create()
                .resource(loinc(p, "8302-2", 180, "cm", t0.minus(2, ChronoUnit.HOURS)))
                .execute();
        fhir.create()
                .resource(support(p, "invasive-ventilation", t0.minus(90, ChronoUnit.MINUTES)))
                .execute();
        fhir.create()
                .resource(setting(p, "19994-3", 0.5, "1", t0.minus(40, ChronoUnit.MINUTES)))
                .execute();
        fhir.create()
                .resource(setting(p, "76248-4", 10, "cm[H2O]", t0.minus(40, ChronoUnit.MINUTES)))
                .execute();
        String pao2 = fhir.create()
                .resource(loinc(p, "2703-7", 80, "mm[Hg]", t0))
                .execute()
                .getId()
                .toUnqualified()
                .getValue();

        Flag flag = await().atMost(Duration.ofSeconds(90))
                .until(() -> flags(p), f -> f.size() == 1)
                .get(0);
        assertThat(flag.getCode().getCodingFirstRep().getCode()).isEqualTo("hypoxemia-moderate");
        assertThat(flag.getExtensionsByUrl(LungflagFhir.Extensions.FLAG_DETAIL))
                .map(e -> ((Reference) e.getValue()).getReference())
                .contains(pao2);
        List<Provenance> provenance =
                await().atMost(Duration.ofSeconds(30)).until(() -> provenanceOf(flag), l -> !l.isEmpty());
        assertThat(provenance.get(0).getEntity())
                .map(e -> e.getWhat().getReference())
                .contains(pao2);
    }

    private static List<Flag> flags(String patientId) {
        Bundle b = fhir.search()
                .forResource(Flag.class)
                .where(Flag.PATIENT.hasId("Patient/" + patientId))
                .returnBundle(Bundle.class)
                .execute();
        return b.getEntry().stream().map(e -> (Flag) e.getResource()).toList();
    }

    private static List<Provenance> provenanceOf(Flag flag) {
        Bundle b = fhir.search()
                .forResource(Provenance.class)
                .where(Provenance.TARGET.hasId(
                        flag.getIdElement().toUnqualifiedVersionless().getValue()))
                .returnBundle(Bundle.class)
                .execute();
        return b.getEntry().stream().map(e -> (Provenance) e.getResource()).toList();
    }
}
