package org.lungflag.service.e2e;

import static org.assertj.core.api.Assertions.assertThat;
import static org.awaitility.Awaitility.await;
import static org.lungflag.service.e2e.FhirFixtures.loinc;
import static org.lungflag.service.e2e.FhirFixtures.patient;
import static org.lungflag.service.e2e.FhirFixtures.setting;
import static org.lungflag.service.e2e.FhirFixtures.support;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.rest.client.api.IGenericClient;
import ca.uhn.fhir.rest.server.exceptions.ResourceVersionConflictException;
import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.time.Duration;
import java.time.Instant;
import java.time.temporal.ChronoUnit;
import java.util.List;
import java.util.UUID;
import org.hl7.fhir.r4.model.Bundle;
import org.hl7.fhir.r4.model.Enumerations.AdministrativeGender;
import org.hl7.fhir.r4.model.Extension;
import org.hl7.fhir.r4.model.Flag;
import org.hl7.fhir.r4.model.Observation;
import org.hl7.fhir.r4.model.Provenance;
import org.hl7.fhir.r4.model.Reference;
import org.hl7.fhir.r4.model.Subscription;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.lungflag.fhir.profiles.LungflagFhir;
import org.lungflag.service.intake.CatchUpSearch;
import org.lungflag.service.intake.SubscriptionRegistrar;
import org.lungflag.service.testsupport.TestAccounts;
import org.springframework.beans.factory.annotation.Autowired;
import org.springframework.boot.test.autoconfigure.actuate.observability.AutoConfigureObservability;
import org.springframework.boot.test.context.SpringBootTest;
import org.springframework.boot.test.web.server.LocalServerPort;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.test.context.ActiveProfiles;
import org.springframework.test.context.DynamicPropertyRegistry;
import org.springframework.test.context.DynamicPropertySource;

/**
 * The live service against a real FHIR server (the embedded HAPI JPA server with rest-hook subscriptions): an
 * Observation created on the server becomes an advisory Flag with Provenance on the same server.
 *
 * <p>Clinical expectations come from the Berlin definition (ARDS Definition Task Force, JAMA 2012, via
 * clinical-reference §2.2 [PUB-2]): P/F = PaO2/FiO2 with PEEP ≥ 5 cmH2O; 100 < P/F ≤ 200 is the moderate band,
 * P/F ≤ 100 severe, above 300 no band. The data are invented.
 */
@SpringBootTest(webEnvironment = SpringBootTest.WebEnvironment.DEFINED_PORT)
@ActiveProfiles("test")
@AutoConfigureObservability(tracing = false)
class LiveServiceEndToEndTest {

    @DynamicPropertySource
    static void sandbox(DynamicPropertyRegistry registry) {
        SandboxServer.register(registry);
        registry.add("lungflag.intake.register-subscriptions", () -> "true");
        registry.add("lungflag.intake.catch-up-interval", () -> "1h");
        registry.add("lungflag.evaluation.advance-interval", () -> "1h");
    }

    @LocalServerPort
    int port;

    @Autowired
    SubscriptionRegistrar registrar;

    @Autowired
    CatchUpSearch catchUp;

    @Autowired
    JdbcClient jdbc;

    static IGenericClient fhir;

    @BeforeAll
    static void client() {
        FhirContext ctx = FhirContext.forR4Cached();
        ctx.getRestfulClientFactory()
                .setServerValidationMode(ca.uhn.fhir.rest.client.api.ServerValidationModeEnum.NEVER);
        fhir = ctx.newRestfulGenericClient(SandboxServer.server().baseUrl());
    }

    private String newPatient() {
        String id = "e2e-" + UUID.randomUUID().toString().substring(0, 8);
        fhir.update()
                .resource(patient(id, AdministrativeGender.MALE, "1961-04-02"))
                .execute();
        return id;
    }

    private String create(Observation o) {
        return fhir.create()
                .resource(o)
                .execute()
                .getId()
                .toUnqualifiedVersionless()
                .getValue();
    }

    private void awaitSubscriptionsActive() {
        await().atMost(Duration.ofSeconds(60)).until(registrar::registered);
        await().atMost(Duration.ofSeconds(60)).untilAsserted(() -> {
            Bundle subs = fhir.search()
                    .forResource(Subscription.class)
                    .returnBundle(Bundle.class)
                    .execute();
            assertThat(subs.getEntry())
                    .map(e -> (Subscription) e.getResource())
                    .filteredOn(s -> s.getChannel().getEndpoint().endsWith(":" + port + "/fhir-hook"))
                    .isNotEmpty()
                    .allSatisfy(s -> assertThat(s.getStatus()).isEqualTo(Subscription.SubscriptionStatus.ACTIVE));
        });
    }

    private List<Flag> flagsOf(String patientId) {
        Bundle b = fhir.search()
                .forResource(Flag.class)
                .where(Flag.PATIENT.hasId("Patient/" + patientId))
                .returnBundle(Bundle.class)
                .execute();
        return b.getEntry().stream().map(e -> (Flag) e.getResource()).toList();
    }

    private List<Provenance> provenanceOf(Flag flag) {
        Bundle b = fhir.search()
                .forResource(Provenance.class)
                .where(Provenance.TARGET.hasId(
                        flag.getIdElement().toUnqualifiedVersionless().getValue()))
                .returnBundle(Bundle.class)
                .execute();
        return b.getEntry().stream().map(e -> (Provenance) e.getResource()).toList();
    }

    private static String code(Flag f) {
        return f.getCode().getCodingFirstRep().getCode();
    }

    /** Ventilated, PEEP 10 and FiO2 0.50 set 40 min before each gas; height 175 cm (PBW 70.6 kg, ARDSNet). */
    private void ventilated(String patientId, Instant start) {
        create(loinc(patientId, "8302-2", 175, "cm", start.minus(2, ChronoUnit.HOURS)));
        create(support(patientId, "invasive-ventilation", start.minus(90, ChronoUnit.MINUTES)));
        create(setting(patientId, "19994-3", 0.5, "1", start.minus(40, ChronoUnit.MINUTES)));
        create(setting(patientId, "76248-4", 10, "cm[H2O]", start.minus(40, ChronoUnit.MINUTES)));
    }

    @Test
    void aBloodGasInTheModerateBandBecomesAFlagWithProvenanceAndEscalationUpdatesTheSameFlag() {
        awaitSubscriptionsActive();
        String p = newPatient();
        Instant t0 = Instant.now().minus(20, ChronoUnit.HOURS).truncatedTo(ChronoUnit.MINUTES);
        ventilated(p, t0);
        // P/F = 80 / 0.50 = 160: Berlin moderate (100 < P/F <= 200)
        String pao2 = create(loinc(p, "2703-7", 80, "mm[Hg]", t0));

        Flag flag = await().atMost(Duration.ofSeconds(60))
                .until(() -> flagsOf(p), flags -> flags.size() == 1)
                .get(0);
        assertThat(code(flag)).isEqualTo("hypoxemia-moderate");
        assertThat(flag.getStatus()).isEqualTo(Flag.FlagStatus.ACTIVE);
        assertThat(flag.getIdentifierFirstRep().getSystem()).isEqualTo(LungflagFhir.Identifiers.ADVISORY_EPISODE);
        assertThat(flag.getAuthor().getReference()).isEqualTo("Device/lungflag");
        assertThat(flag.getExtensionsByUrl(LungflagFhir.Extensions.FLAG_DETAIL))
                .map(e -> ((Reference) e.getValue()).getReference())
                .anySatisfy(ref -> assertThat(ref).startsWith(pao2 + "/_history/"));
        assertThat(flag.getExtensionByUrl(LungflagFhir.Extensions.ADVISORY_BASIS)
                        .getValue()
                        .primitiveValue())
                .contains("160");
        assertThat(flag.getExtensionByUrl(LungflagFhir.Extensions.ADVISORY_CAUTION)
                        .getValue()
                        .primitiveValue())
                .isNotBlank();
        // the Provenance follows the Flag write (it targets the Flag version the server assigned)
        List<Provenance> provenance =
                await().atMost(Duration.ofSeconds(30)).until(() -> provenanceOf(flag), list -> list.size() == 1);
        assertThat(provenance.get(0).getPolicy().get(0).getValue())
                .startsWith(LungflagFhir.RULE_CANONICAL_BASE + "hypoxemia|");
        assertThat(provenance.get(0).getEntity())
                .allSatisfy(e -> assertThat(e.getRole()).isEqualTo(Provenance.ProvenanceEntityRole.DERIVATION))
                .anySatisfy(e -> assertThat(e.getWhat().getReference()).startsWith(pao2 + "/_history/"));

        // Two hours later: PaO2 45 at FiO2 0.50 -> P/F 90, Berlin severe (P/F <= 100): the same Flag escalates.
        create(setting(p, "19994-3", 0.5, "1", t0.plus(100, ChronoUnit.MINUTES)));
        create(setting(p, "76248-4", 10, "cm[H2O]", t0.plus(100, ChronoUnit.MINUTES)));
        create(loinc(p, "2703-7", 45, "mm[Hg]", t0.plus(2, ChronoUnit.HOURS)));
        Flag escalated = await().atMost(Duration.ofSeconds(60))
                .until(() -> flagsOf(p).get(0), f -> code(f).equals("hypoxemia-severe"));
        assertThat(flagsOf(p)).hasSize(1);
        assertThat(escalated.getIdElement().getIdPart())
                .isEqualTo(flag.getIdElement().getIdPart());
        assertThat(escalated.getIdentifierFirstRep().getValue())
                .isEqualTo(flag.getIdentifierFirstRep().getValue());
        await().atMost(Duration.ofSeconds(30))
                .until(() -> provenanceOf(escalated).size() == 2);
    }

    @Test
    void anAdvisoryResolvesAfterSixHoursWithNoBandMetAndTheFlagBecomesInactive() {
        awaitSubscriptionsActive();
        String p = newPatient();
        Instant t0 = Instant.now().minus(20, ChronoUnit.HOURS).truncatedTo(ChronoUnit.MINUTES);
        ventilated(p, t0);
        create(loinc(p, "2703-7", 80, "mm[Hg]", t0)); // P/F 160: moderate
        await().atMost(Duration.ofSeconds(60)).until(() -> flagsOf(p).size() == 1);
        // Improved: FiO2 0.30, PaO2 100 -> P/F 333 (above the mild band's 300) at +4 h and +11 h: resolves after 6 h
        for (int h : new int[] {4, 11}) {
            create(setting(p, "19994-3", 0.3, "1", t0.plus(h, ChronoUnit.HOURS).minus(30, ChronoUnit.MINUTES)));
            create(setting(
                    p, "76248-4", 8, "cm[H2O]", t0.plus(h, ChronoUnit.HOURS).minus(30, ChronoUnit.MINUTES)));
            create(loinc(p, "2703-7", 100, "mm[Hg]", t0.plus(h, ChronoUnit.HOURS)));
        }
        Flag resolved = await().atMost(Duration.ofSeconds(60))
                .until(() -> flagsOf(p).get(0), f -> f.getStatus() == Flag.FlagStatus.INACTIVE);
        assertThat(resolved.getPeriod().hasEnd()).isTrue();
        assertThat(flagsOf(p)).hasSize(1);
    }

    @Test
    void aRedeliveredNotificationChangesNothing() throws Exception {
        awaitSubscriptionsActive();
        String p = newPatient();
        Instant t0 = Instant.now().minus(10, ChronoUnit.HOURS).truncatedTo(ChronoUnit.MINUTES);
        ventilated(p, t0);
        String pao2 = create(loinc(p, "2703-7", 80, "mm[Hg]", t0));
        Flag flag = await().atMost(Duration.ofSeconds(60))
                .until(() -> flagsOf(p), f -> f.size() == 1)
                .get(0);
        await().atMost(Duration.ofSeconds(30)).until(() -> provenanceOf(flag).size() == 1);
        long evaluations = countEvaluations(p);
        Observation current =
                fhir.read().resource(Observation.class).withId(pao2).execute();
        String body = FhirContext.forR4Cached().newJsonParser().encodeResourceToString(current);
        for (int i = 0; i < 3; i++) {
            HttpResponse<String> r = HttpClient.newHttpClient()
                    .send(
                            HttpRequest.newBuilder(URI.create("http://127.0.0.1:" + port + "/fhir-hook/" + pao2))
                                    .header("Authorization", "Bearer test-hook-token")
                                    .header("Content-Type", "application/fhir+json")
                                    .PUT(HttpRequest.BodyPublishers.ofString(body))
                                    .build(),
                            HttpResponse.BodyHandlers.ofString());
            assertThat(r.statusCode()).isEqualTo(200);
        }
        await().atMost(Duration.ofSeconds(30)).until(() -> pendingInbox() == 0);
        assertThat(countEvaluations(p)).isEqualTo(evaluations);
        Flag after = flagsOf(p).get(0);
        assertThat(after.getMeta().getVersionId()).isEqualTo(flag.getMeta().getVersionId());
        assertThat(provenanceOf(after)).hasSize(1);
    }

    @Test
    void aNotificationMissedWhileTheChannelWasDownIsFoundByTheCatchUpSearch() {
        awaitSubscriptionsActive();
        List<Subscription> ours =
                fhir.search().forResource(Subscription.class).returnBundle(Bundle.class).execute().getEntry().stream()
                        .map(e -> (Subscription) e.getResource())
                        .filter(s -> s.getChannel().getEndpoint().endsWith(":" + port + "/fhir-hook"))
                        .toList();
        ours.forEach(s -> setStatus(s, Subscription.SubscriptionStatus.OFF));
        try {
            String p = newPatient();
            Instant t0 = Instant.now().minus(6, ChronoUnit.HOURS).truncatedTo(ChronoUnit.MINUTES);
            ventilated(p, t0);
            create(loinc(p, "2703-7", 50, "mm[Hg]", t0)); // P/F 100: Berlin severe (P/F <= 100 is severe)
            catchUp.runOnce();
            List<Flag> flags = await().atMost(Duration.ofSeconds(60)).until(() -> flagsOf(p), f -> f.size() == 1);
            assertThat(code(flags.get(0))).isEqualTo("hypoxemia-severe");
        } finally {
            ours.forEach(s -> setStatus(s, Subscription.SubscriptionStatus.REQUESTED));
        }
    }

    /** The server may touch a Subscription meanwhile (activation), so a version conflict is retried. */
    private static void setStatus(Subscription s, Subscription.SubscriptionStatus status) {
        await().atMost(Duration.ofSeconds(20))
                .ignoreException(ResourceVersionConflictException.class)
                .until(() -> {
                    Subscription current = fhir.read()
                            .resource(Subscription.class)
                            .withId(s.getIdElement().getIdPart())
                            .execute();
                    current.setStatus(status);
                    fhir.update().resource(current).execute();
                    return true;
                });
    }

    @Test
    void healthReportsTheFhirServerAndDatabaseAndMetricsCountWhatHappened() throws Exception {
        aBloodGasInTheModerateBandBecomesAFlagWithProvenanceAndEscalationUpdatesTheSameFlag();
        HttpClient http = HttpClient.newHttpClient();
        HttpResponse<String> health = http.send(
                HttpRequest.newBuilder(URI.create("http://127.0.0.1:" + port + "/actuator/health"))
                        .header("Authorization", TestAccounts.auditor())
                        .build(),
                HttpResponse.BodyHandlers.ofString());
        assertThat(health.statusCode()).isEqualTo(200);
        assertThat(health.body()).contains("\"fhirServer\"").contains("\"db\"").contains("\"writeBack\"");
        HttpResponse<String> metrics = http.send(
                HttpRequest.newBuilder(URI.create("http://127.0.0.1:" + port + "/actuator/prometheus"))
                        .header("Authorization", TestAccounts.admin())
                        .build(),
                HttpResponse.BodyHandlers.ofString());
        assertThat(metrics.body())
                .contains("lungflag_intake_received_total{channel=\"REST_HOOK\"")
                .contains("lungflag_evaluations_total{outcome=\"ONSET\",rule=\"hypoxemia\"")
                .contains("lungflag_fhir_write_seconds_count")
                .doesNotContain("Patient/");
    }

    private long countEvaluations(String patientId) {

        return jdbc.sql("SELECT COUNT(*) FROM evaluation WHERE patient_id = :p")
                .param("p", patientId)
                .query(Long.class)
                .single();
    }

    private long pendingInbox() {
        return jdbc.sql("SELECT COUNT(*) FROM intake_inbox WHERE status <> 'DONE'")
                .query(Long.class)
                .single();
    }

    static String ext(Flag f, String url) {
        Extension e = f.getExtensionByUrl(url);
        return e == null ? null : e.getValue().primitiveValue();
    }
}
