package org.lungflag.service.e2e;

import static org.assertj.core.api.Assertions.assertThat;
import static org.awaitility.Awaitility.await;
import static org.lungflag.service.e2e.FhirFixtures.loinc;
import static org.lungflag.service.e2e.FhirFixtures.patient;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.rest.client.api.IGenericClient;
import ca.uhn.fhir.rest.client.api.ServerValidationModeEnum;
import com.sun.net.httpserver.HttpServer;
import java.net.InetSocketAddress;
import java.time.Duration;
import java.time.Instant;
import java.time.temporal.ChronoUnit;
import java.util.List;
import java.util.concurrent.CopyOnWriteArrayList;
import org.hl7.fhir.r4.model.Device;
import org.hl7.fhir.r4.model.Enumerations.AdministrativeGender;
import org.hl7.fhir.r4.model.Flag;
import org.hl7.fhir.r4.model.Provenance;
import org.hl7.fhir.r4.model.Reference;
import org.hl7.fhir.r4.model.StringType;
import org.hl7.fhir.r4.model.Subscription;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.lungflag.fhir.profiles.LungflagFhir;
import org.testcontainers.Testcontainers;
import org.testcontainers.containers.GenericContainer;
import org.testcontainers.containers.Network;
import org.testcontainers.containers.PostgreSQLContainer;

/**
 * The FHIR server image exactly as {@code docker-compose.yml} configures it (HAPI JPA on PostgreSQL) does what
 * DEVELOPERS.md "What a FHIR server must do" lists: it keeps the versions in the references Lungflag writes, and
 * delivers rest-hooks with the resource as payload and the channel header. Runs where a Docker engine answers;
 * skipped (not failed) where none does.
 */
@org.testcontainers.junit.jupiter.Testcontainers(disabledWithoutDocker = true)
class FhirServerImageInContainerTest {

    static Network network;
    static PostgreSQLContainer<?> database;
    static GenericContainer<?> fhirServer;
    static IGenericClient fhir;

    @BeforeAll
    static void start() {
        network = Network.newNetwork();
        database = ContainerImages.fhirDatabase(network);
        database.start();
        fhirServer = ContainerImages.fhirServer(network);
        fhirServer.start();
        FhirContext ctx = FhirContext.forR4Cached();
        ctx.getRestfulClientFactory().setServerValidationMode(ServerValidationModeEnum.NEVER);
        ctx.getRestfulClientFactory().setSocketTimeout(60_000);
        fhir = ctx.newRestfulGenericClient(ContainerImages.fhirBaseUrl(fhirServer));
    }

    @AfterAll
    static void stop() {
        if (fhirServer != null) {
            fhirServer.stop();
        }
        if (database != null) {
            database.stop();
        }
        if (network != null) {
            network.close();
        }
    }

    @Test
    void flagsAndProvenanceKeepTheExactObservationVersionsTheyCite() {
        fhir.update()
                .resource(patient("img-1", AdministrativeGender.FEMALE, "1970-01-02"))
                .execute();
        Device device = new Device();
        device.setId("lungflag-image-test");
        fhir.update().resource(device).execute();
        String obs = fhir.create()
                .resource(loinc("img-1", "2703-7", 80, "mm[Hg]", Instant.now().minus(1, ChronoUnit.HOURS)))
                .execute()
                .getId()
                .toUnqualified()
                .getValue();
        assertThat(obs).contains("/_history/1");

        Flag flag = new Flag();
        flag.setStatus(Flag.FlagStatus.ACTIVE);
        flag.setSubject(new Reference("Patient/img-1"));
        flag.getCode().setText("image test");
        flag.addExtension(LungflagFhir.Extensions.FLAG_DETAIL, new Reference(obs));
        String flagRef =
                fhir.create().resource(flag).execute().getId().toUnqualified().getValue();

        Provenance provenance = new Provenance();
        provenance.addTarget(new Reference(flagRef));
        provenance.setRecorded(new java.util.Date());
        provenance.addAgent().setWho(new Reference("Device/lungflag-image-test"));
        provenance
                .addEntity()
                .setRole(Provenance.ProvenanceEntityRole.DERIVATION)
                .setWhat(new Reference(obs));
        var created = fhir.create().resource(provenance).execute().getId();

        Provenance stored = fhir.read()
                .resource(Provenance.class)
                .withId(created.getIdPart())
                .execute();
        assertThat(stored.getTargetFirstRep().getReference()).isEqualTo(flagRef);
        assertThat(stored.getEntityFirstRep().getWhat().getReference()).isEqualTo(obs);
        Flag storedFlag = fhir.read()
                .resource(Flag.class)
                .withId(new org.hl7.fhir.r4.model.IdType(flagRef).getIdPart())
                .execute();
        assertThat(((Reference) storedFlag
                                .getExtensionByUrl(LungflagFhir.Extensions.FLAG_DETAIL)
                                .getValue())
                        .getReference())
                .isEqualTo(obs);
    }

    @Test
    void aRestHookSubscriptionDeliversTheObservationWithItsHeaderWithinSeconds() throws Exception {
        List<String> received = new CopyOnWriteArrayList<>();
        HttpServer hook = HttpServer.create(new InetSocketAddress(0), 0);
        hook.createContext("/hook", exchange -> {
            received.add(
                    exchange.getRequestMethod() + " " + exchange.getRequestURI().getPath() + " "
                            + exchange.getRequestHeaders().getFirst("Authorization"));
            exchange.sendResponseHeaders(200, -1);
            exchange.close();
        });
        hook.start();
        try {
            Testcontainers.exposeHostPorts(hook.getAddress().getPort());
            fhir.update()
                    .resource(patient("img-2", AdministrativeGender.MALE, "1966-06-06"))
                    .execute();
            Subscription s = new Subscription();
            s.setStatus(Subscription.SubscriptionStatus.REQUESTED);
            s.setReason("image test");
            s.setCriteria("Observation?code=http://loinc.org|2703-7");
            s.getChannel()
                    .setType(Subscription.SubscriptionChannelType.RESTHOOK)
                    .setEndpoint("http://host.testcontainers.internal:"
                            + hook.getAddress().getPort() + "/hook")
                    .setPayload("application/fhir+json")
                    .setHeader(List.of(new StringType("Authorization: Bearer image-test")));
            String sub = fhir.create().resource(s).execute().getId().getIdPart();
            await().atMost(Duration.ofSeconds(30))
                    .until(() -> fhir.read()
                                    .resource(Subscription.class)
                                    .withId(sub)
                                    .execute()
                                    .getStatus()
                            == Subscription.SubscriptionStatus.ACTIVE);
            String obs = fhir.create()
                    .resource(
                            loinc("img-2", "2703-7", 75, "mm[Hg]", Instant.now().minus(1, ChronoUnit.HOURS)))
                    .execute()
                    .getId()
                    .getIdPart();
            await().atMost(Duration.ofSeconds(15))
                    .until(() -> received.contains("PUT /hook/Observation/" + obs + " Bearer image-test"));
        } finally {
            hook.stop(0);
        }
    }
}
