package org.lungflag.service.e2e;

import static org.assertj.core.api.Assertions.assertThat;
import static org.awaitility.Awaitility.await;
import static org.lungflag.service.e2e.FhirFixtures.loinc;
import static org.lungflag.service.e2e.FhirFixtures.patient;
import static org.lungflag.service.e2e.FhirFixtures.setting;
import static org.lungflag.service.e2e.FhirFixtures.support;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.rest.client.api.IGenericClient;
import java.time.Duration;
import java.time.Instant;
import java.time.temporal.ChronoUnit;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.UUID;
import java.util.concurrent.CompletableFuture;
import java.util.concurrent.Semaphore;
import java.util.concurrent.TimeUnit;
import org.hl7.fhir.r4.model.Bundle;
import org.hl7.fhir.r4.model.Enumerations.AdministrativeGender;
import org.hl7.fhir.r4.model.Flag;
import org.hl7.fhir.r4.model.Observation;
import org.hl7.fhir.r4.model.Subscription;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.lungflag.fhir.profiles.LungflagFhir;
import org.lungflag.service.LungflagApplication;
import org.lungflag.service.intake.SubscriptionRegistrar;
import org.lungflag.service.normalize.FhirSpecimenLookup;
import org.lungflag.service.normalize.NormalizedResource;
import org.lungflag.service.normalize.Normalizer;
import org.lungflag.service.offline.OfflineEvaluation;
import org.lungflag.service.offline.PatientRun;
import org.lungflag.service.patient.PatientDirectory;
import org.lungflag.service.reliability.Harness;
import org.lungflag.service.testsupport.PostgresCondition;
import org.lungflag.service.testsupport.RequiresPostgres;
import org.springframework.boot.builder.SpringApplicationBuilder;
import org.springframework.boot.context.event.ApplicationEnvironmentPreparedEvent;
import org.springframework.boot.context.logging.LoggingApplicationListener;
import org.springframework.context.ApplicationListener;
import org.springframework.context.ConfigurableApplicationContext;
import org.springframework.core.Ordered;
import org.springframework.jdbc.core.simple.JdbcClient;

/**
 * Two Lungflag instances (two Spring contexts, two ports) on one PostgreSQL schema and one FHIR server, behind a
 * round-robin load balancer without session affinity, as README.md "Scaling out" documents. Both register at the
 * balancer's URL, so the FHIR server holds one set of Subscriptions and each rest-hook call reaches one instance:
 * a patient's notifications are split between them, late data included (the blood gas arrives before the
 * ventilator settings it needs). The result must be what one evaluator computes from the same records
 * ({@link OfflineEvaluation}, the path replay and the dry run use): no duplicate Flag, no lost or extra evaluation,
 * every outbox row delivered once.
 *
 * <p>Clinical values from the Berlin definition (ARDS Definition Task Force, JAMA 2012, clinical-reference §2.2
 * [PUB-2]): PaO2 80 mmHg at FiO2 0.50, PEEP 10 cmH2O is P/F 160 (moderate band); PaO2 45 at FiO2 0.50 is P/F 90
 * (severe, P/F ≤ 100). The patients are invented.
 */
@RequiresPostgres
class TwoInstancesOnOnePostgresTest {

    private static final String SCHEMA =
            "lf_two_" + UUID.randomUUID().toString().replace("-", "").substring(0, 12);
    private static final int PATIENTS = 4;

    static RoundRobinProxy balancer;
    static ConfigurableApplicationContext a;
    static ConfigurableApplicationContext b;
    static IGenericClient fhir;

    @BeforeAll
    static void start() throws Exception {
        FhirContext ctx = FhirContext.forR4Cached();
        ctx.getRestfulClientFactory()
                .setServerValidationMode(ca.uhn.fhir.rest.client.api.ServerValidationModeEnum.NEVER);
        fhir = ctx.newRestfulGenericClient(SandboxServer.server().baseUrl());
        balancer = new RoundRobinProxy();
        int portA = SandboxServer.freePort();
        int portB = SandboxServer.freePort();
        // started together: both migrate the schema and register Subscriptions at the same moment
        CompletableFuture<ConfigurableApplicationContext> startA = CompletableFuture.supplyAsync(() -> instance(portA));
        CompletableFuture<ConfigurableApplicationContext> startB = CompletableFuture.supplyAsync(() -> instance(portB));
        a = startA.get();
        b = startB.get();
        balancer.targets(List.of(portA, portB));
    }

    /**
     * Spring Boot's logging set-up writes JVM-wide system properties, so two instances starting in one JVM must not run
     * it at the same moment (it failed once with an "Unknown format" of the structured console log). Only that step is
     * taken in turn; the schema migration and the Subscription registration still overlap.
     */
    private static final Semaphore LOGGING_SET_UP = new Semaphore(1);

    private record AroundLoggingSetUp(boolean before)
            implements ApplicationListener<ApplicationEnvironmentPreparedEvent>, Ordered {
        @Override
        public void onApplicationEvent(ApplicationEnvironmentPreparedEvent event) {
            if (!before) {
                LOGGING_SET_UP.release();
                return;
            }
            try {
                // bounded: if the other instance's set-up failed before releasing, this one goes on after a while
                LOGGING_SET_UP.tryAcquire(60, TimeUnit.SECONDS);
            } catch (InterruptedException e) {
                Thread.currentThread().interrupt();
            }
        }

        @Override
        public int getOrder() {
            return LoggingApplicationListener.DEFAULT_ORDER + (before ? -1 : 1);
        }
    }

    static ConfigurableApplicationContext instance(int port) {
        return new SpringApplicationBuilder(LungflagApplication.class)
                .listeners(new AroundLoggingSetUp(true), new AroundLoggingSetUp(false))
                .profiles("test")
                .run(
                        "--server.port=" + port,
                        "--spring.datasource.url=" + PostgresCondition.url() + "?currentSchema=" + SCHEMA,
                        "--spring.datasource.username=" + PostgresCondition.user(),
                        "--spring.datasource.password=",
                        "--spring.flyway.schemas=" + SCHEMA,
                        "--spring.flyway.create-schemas=true",
                        "--lungflag.fhir.base-url=" + SandboxServer.server().baseUrl(),
                        "--lungflag.intake.public-url=" + balancer.url(),
                        "--lungflag.intake.register-subscriptions=true",
                        "--lungflag.intake.catch-up-interval=1h",
                        "--lungflag.evaluation.advance-interval=1h");
    }

    @AfterAll
    static void stop() {
        try {
            if (fhir != null && balancer != null) {
                for (Subscription s : ours()) {
                    fhir.delete()
                            .resourceById(s.getIdElement().toUnqualifiedVersionless())
                            .execute();
                }
            }
        } finally {
            if (a != null) {
                a.close();
            }
            if (b != null) {
                b.close();
            }
            if (balancer != null) {
                balancer.close();
            }
        }
    }

    static List<Subscription> ours() {
        Bundle subs = fhir.search()
                .forResource(Subscription.class)
                .count(100)
                .returnBundle(Bundle.class)
                .execute();
        return subs.getEntry().stream()
                .map(e -> (Subscription) e.getResource())
                .filter(s ->
                        (balancer.url() + "/fhir-hook").equals(s.getChannel().getEndpoint()))
                .toList();
    }

    private static JdbcClient jdbc() {
        return a.getBean(JdbcClient.class);
    }

    private static String create(Observation o) {
        return fhir.create().resource(o).execute().getId().getIdPart();
    }

    @Test
    void theTwoInstancesRegisterOneSetOfSubscriptionsAtTheBalancersAddress() {
        await().atMost(Duration.ofSeconds(60))
                .until(() -> a.getBean(SubscriptionRegistrar.class).registered()
                        && b.getBean(SubscriptionRegistrar.class).registered());
        List<Subscription> subs = ours();
        assertThat(subs)
                .hasSize(a.getBean(SubscriptionRegistrar.class).criteria().size());
        assertThat(subs.stream().map(Subscription::getCriteria).distinct()).hasSize(subs.size());
    }

    @Test
    void notificationsSplitBetweenInstancesGiveWhatOneEvaluatorComputesWithNoDuplicateFlagAndEachWriteOnce()
            throws Exception {
        await().atMost(Duration.ofSeconds(60))
                .until(() -> a.getBean(SubscriptionRegistrar.class).registered()
                        && b.getBean(SubscriptionRegistrar.class).registered());
        await().atMost(Duration.ofSeconds(30))
                .until(() -> ours().stream().allMatch(s -> s.getStatus() == Subscription.SubscriptionStatus.ACTIVE));

        long began = System.nanoTime();
        Instant t0 = Instant.now().minus(20, ChronoUnit.HOURS).truncatedTo(ChronoUnit.MINUTES);
        List<String> patients = new ArrayList<>();
        Map<String, List<String>> created = new java.util.HashMap<>();
        for (int i = 0; i < PATIENTS; i++) {
            String p = "two-" + UUID.randomUUID().toString().substring(0, 8);
            fhir.update()
                    .resource(patient(p, AdministrativeGender.MALE, "1957-03-11"))
                    .execute();
            patients.add(p);
            created.put(p, new ArrayList<>());
        }
        // round 1, every patient: the blood gas first, then (late) the height, support and settings it needs
        for (String p : patients) {
            created.get(p).add(create(loinc(p, "2703-7", 80, "mm[Hg]", t0)));
        }
        for (String p : patients) {
            created.get(p).add(create(loinc(p, "8302-2", 178, "cm", t0.minus(2, ChronoUnit.HOURS))));
            created.get(p).add(create(support(p, "invasive-ventilation", t0.minus(90, ChronoUnit.MINUTES))));
            created.get(p).add(create(setting(p, "19994-3", 0.5, "1", t0.minus(40, ChronoUnit.MINUTES))));
            created.get(p).add(create(setting(p, "76248-4", 10, "cm[H2O]", t0.minus(40, ChronoUnit.MINUTES))));
        }
        // round 2: settings, then a worse gas two hours on
        for (String p : patients) {
            created.get(p).add(create(setting(p, "19994-3", 0.5, "1", t0.plus(100, ChronoUnit.MINUTES))));
            created.get(p).add(create(setting(p, "76248-4", 10, "cm[H2O]", t0.plus(100, ChronoUnit.MINUTES))));
            created.get(p).add(create(loinc(p, "2703-7", 45, "mm[Hg]", t0.plus(2, ChronoUnit.HOURS))));
        }

        long written = System.nanoTime();
        await().atMost(Duration.ofSeconds(90))
                .pollInterval(Duration.ofMillis(500))
                .untilAsserted(() -> {
                    for (String p : patients) {
                        assertThat(jdbc().sql(
                                                "SELECT DISTINCT resource_id FROM received_resource WHERE patient_id = :p")
                                        .param("p", p)
                                        .query(String.class)
                                        .list())
                                .containsAll(created.get(p));
                    }
                    assertThat(count("SELECT COUNT(*) FROM intake_inbox WHERE status <> 'DONE'"))
                            .isZero();
                    assertThat(count("SELECT COUNT(*) FROM outbox WHERE status IN ('PENDING', 'SENDING')"))
                            .isZero();
                });

        System.out.printf(
                "two instances: %d Observations written in %d ms, all evaluated and written back %d ms later;"
                        + " hook calls per instance %d / %d%n",
                PATIENTS * 8,
                (written - began) / 1_000_000,
                (System.nanoTime() - written) / 1_000_000,
                balancer.served(0),
                balancer.served(1));
        // the work was shared: both instances took hook calls and processed inbox rows
        assertThat(balancer.served(0)).isPositive();
        assertThat(balancer.served(1)).isPositive();
        assertThat(jdbc().sql("SELECT DISTINCT claimed_by FROM intake_inbox WHERE claimed_by IS NOT NULL")
                        .query(String.class)
                        .list())
                .hasSize(2);

        OfflineEvaluation offline = a.getBean(OfflineEvaluation.class);
        Normalizer normalizer = a.getBean(Normalizer.class);
        FhirSpecimenLookup specimens = new FhirSpecimenLookup(fhir);
        for (String p : patients) {
            List<NormalizedResource> resources = new ArrayList<>();
            for (String id : created.get(p)) {
                Observation o =
                        fhir.read().resource(Observation.class).withId(id).execute();
                resources.add(normalizer.normalize(o, Instant.now(), specimens));
            }
            PatientRun run = offline.run(a.getBean(PatientDirectory.class).facts(p), resources, null);

            // the same evaluations as one evaluator over the same records: none lost, none twice
            assertThat(Harness.liveEvaluations(jdbc(), p))
                    .as("evaluations of Patient/%s", p)
                    .containsExactlyInAnyOrderElementsOf(Harness.offlineEvaluations(run));

            // one Flag per episode, and the final ones are what the single evaluator would leave
            List<Flag> flags = flagsOf(p);
            assertThat(flags.stream().map(f -> f.getIdentifierFirstRep().getValue()))
                    .doesNotHaveDuplicates();
            List<String> standing = flags.stream()
                    .filter(f -> f.getStatus() != Flag.FlagStatus.ENTEREDINERROR)
                    .map(f -> f.getIdentifierFirstRep().getValue() + " "
                            + f.getCode().getCodingFirstRep().getCode() + " "
                            + f.getStatus().toCode())
                    .toList();
            assertThat(standing)
                    .containsExactlyInAnyOrderElementsOf(offline.flags(run, "live").stream()
                            .map(f -> f.getIdentifierFirstRep().getValue() + " "
                                    + f.getCode().getCodingFirstRep().getCode() + " "
                                    + f.getStatus().toCode())
                            .toList());
            assertThat(standing).singleElement().asString().contains("hypoxemia-severe");
        }

        // every write was delivered, each exactly once
        List<Map<String, Object>> outbox = jdbc().sql(
                        "SELECT id, episode_key, status, attempts, last_error FROM outbox WHERE kind = 'FLAG'")
                .query()
                .listOfRows();
        List<Map<String, Object>> refused = jdbc().sql(
                        "SELECT reason_code, detail, server_outcome FROM quarantine WHERE stage = 'WRITE_BACK'")
                .query()
                .listOfRows();
        assertThat(outbox)
                .as("outbox rows; write-back refusals: %s", refused)
                .isNotEmpty()
                .allSatisfy(r -> {
                    assertThat(r.get("status")).isEqualTo("DELIVERED");
                    assertThat(((Number) r.get("attempts")).intValue()).isEqualTo(1);
                });
    }

    private static long count(String sql) {
        return jdbc().sql(sql).query(Long.class).single();
    }

    private static List<Flag> flagsOf(String patientId) {
        Bundle bundle = fhir.search()
                .forResource(Flag.class)
                .where(Flag.PATIENT.hasId("Patient/" + patientId))
                .and(Flag.IDENTIFIER.hasSystemWithAnyCode(LungflagFhir.Identifiers.ADVISORY_EPISODE))
                .returnBundle(Bundle.class)
                .execute();
        return bundle.getEntry().stream().map(e -> (Flag) e.getResource()).toList();
    }
}
