package org.lungflag.service.reliability;

import static org.assertj.core.api.Assertions.assertThat;
import static org.awaitility.Awaitility.await;

import java.net.URI;
import java.net.http.HttpResponse;
import java.time.Duration;
import java.time.Instant;
import java.time.temporal.ChronoUnit;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.UUID;
import org.hl7.fhir.r4.model.Observation;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.lungflag.service.e2e.SandboxServer;
import org.lungflag.service.offline.PatientRun;
import org.lungflag.service.testsupport.PostgresCondition;
import org.lungflag.service.testsupport.RequiresPostgres;
import org.springframework.context.ConfigurableApplicationContext;
import org.springframework.jdbc.core.simple.JdbcClient;

/**
 * The audit database (PostgreSQL) goes away under a running service: the service reaches it through a {@link
 * FaultProxy} that the test switches off and on. While it is away the rest-hook must answer 503 with Retry-After (so
 * the FHIR server retries) and acknowledge nothing it has not committed; readiness reports DOWN. When the database
 * returns the service recovers by itself (no restart): the retried notifications are accepted and everything is
 * evaluated and written once, as one evaluator over the same records computes ({@link
 * org.lungflag.service.offline.OfflineEvaluation}). Clinical values: see {@link Harness} (Berlin 2012 bands).
 */
@RequiresPostgres
class DatabaseOutageOnPostgresTest {

    private static final String SCHEMA =
            "lf_outage_" + UUID.randomUUID().toString().replace("-", "").substring(0, 12);

    static FaultProxy database;
    static ConfigurableApplicationContext service;
    static int port;
    static JdbcClient direct;

    @BeforeAll
    static void start() {
        URI pg = URI.create(PostgresCondition.url().substring("jdbc:".length()));
        database = new FaultProxy(pg.getHost(), pg.getPort());
        port = SandboxServer.freePort();
        String viaProxy = "jdbc:postgresql://127.0.0.1:" + database.port() + pg.getPath() + "?currentSchema=" + SCHEMA;
        service = Harness.service(
                port,
                SandboxServer.server().baseUrl(),
                "--spring.datasource.url=" + viaProxy,
                "--spring.datasource.username=" + PostgresCondition.user(),
                "--spring.datasource.password=",
                "--spring.datasource.hikari.connection-timeout=2000",
                "--spring.flyway.schemas=" + SCHEMA,
                "--spring.flyway.create-schemas=true",
                "--lungflag.evaluation.hydrate=false");
        // the test reads the store straight from PostgreSQL, not through the proxy
        direct = JdbcClient.create(new org.springframework.jdbc.datasource.DriverManagerDataSource(
                PostgresCondition.url() + "?currentSchema=" + SCHEMA, PostgresCondition.user(), ""));
    }

    @AfterAll
    static void stop() {
        if (service != null) {
            service.close();
        }
        if (database != null) {
            database.close();
        }
        if (direct != null) {
            direct.sql("DROP SCHEMA IF EXISTS " + SCHEMA + " CASCADE").update();
        }
    }

    @Test
    void theHookAnswers503WhileTheDatabaseIsAwayAcknowledgesOnlyWhatItCommittedAndRecoversByItself() throws Exception {
        Instant t0 = Instant.now().minus(20, ChronoUnit.HOURS).truncatedTo(ChronoUnit.MINUTES);
        Map<String, List<Observation>> records = new LinkedHashMap<>();
        List<Observation> acknowledged = new ArrayList<>();
        List<Observation> refused = new ArrayList<>();
        for (int i = 0; i < 3; i++) {
            String p = Harness.newPatient("dbdown");
            List<Observation> course = new ArrayList<>();
            for (Observation o : Harness.ventilatedCourse(p, t0, false)) {
                course.add(Harness.create(o));
            }
            records.put(p, course);
            for (Observation o : course.subList(0, 5)) {
                assertThat(Harness.deliver(port, o)).isEqualTo(200);
                acknowledged.add(o);
            }
        }
        // the database goes away while the first gases may still be in processing
        database.stop();
        int answered503 = 0;
        try {
            for (List<Observation> course : records.values()) {
                for (Observation o : course.subList(5, course.size())) {
                    HttpResponse<String> r = Harness.deliverJson(
                            port,
                            o.getIdElement().getIdPart(),
                            Harness.FHIR.newJsonParser().encodeResourceToString(o));
                    assertThat(r.statusCode())
                            .as("hook answer while the database is away")
                            .isEqualTo(503);
                    assertThat(r.headers().firstValue("Retry-After")).isPresent();
                    assertThat(r.body()).contains("OperationOutcome").contains("transient");
                    refused.add(o);
                    answered503++;
                }
            }
            assertThat(Harness.get(port, "/actuator/health/readiness").statusCode())
                    .isEqualTo(503);
            // nothing refused was recorded
            // (through the hook; a catch-up search may queue the same records from the server, which is fine)
            assertThat(direct.sql(
                                    "SELECT COUNT(*) FROM intake_inbox WHERE channel = 'REST_HOOK' AND resource_id IN (:ids)")
                            .param("ids", ids(refused))
                            .query(Long.class)
                            .single())
                    .isZero();
        } finally {
            database.start();
        }

        // the FHIR server retries; the service, not restarted, accepts once the database answers again
        for (Observation o : refused) {
            await().atMost(Duration.ofSeconds(60))
                    .pollInterval(Duration.ofMillis(500))
                    .until(() -> Harness.deliver(port, o) == 200);
            acknowledged.add(o);
        }
        await().atMost(Duration.ofSeconds(90))
                .pollInterval(Duration.ofMillis(500))
                .until(() -> Harness.settled(direct));
        assertThat(Harness.get(port, "/actuator/health/readiness").statusCode()).isEqualTo(200);
        // every acknowledged notification was recorded and processed
        assertThat(direct.sql("SELECT DISTINCT resource_id FROM received_resource WHERE resource_id IN (:ids)")
                        .param("ids", ids(acknowledged))
                        .query(String.class)
                        .list())
                .containsExactlyInAnyOrderElementsOf(ids(acknowledged));
        for (var e : records.entrySet()) {
            String p = e.getKey();
            PatientRun run = Harness.offline(service, p, e.getValue());
            assertThat(Harness.liveEvaluations(direct, p))
                    .as("evaluations of Patient/%s", p)
                    .containsExactlyInAnyOrderElementsOf(Harness.offlineEvaluations(run));
            assertThat(Harness.standing(Harness.flagsOf(p)))
                    .containsExactlyInAnyOrderElementsOf(Harness.offlineStanding(service, run))
                    .singleElement()
                    .asString()
                    .endsWith("hypoxemia-severe active");
            Harness.assertOneFlagPerEpisodeAndOneProvenancePerVersion(p, true);
        }
        System.out.printf(
                "database outage: %d notifications answered 503 while PostgreSQL was away, all accepted on retry"
                        + " after it returned; %d acknowledged in all, each recorded and evaluated once%n",
                answered503, acknowledged.size());
    }

    private static List<String> ids(List<Observation> list) {
        return list.stream().map(o -> o.getIdElement().getIdPart()).distinct().toList();
    }
}
