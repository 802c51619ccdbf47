package org.lungflag.service.reliability;

import static org.assertj.core.api.Assertions.assertThat;
import static org.awaitility.Awaitility.await;

import java.nio.file.Path;
import java.time.Duration;
import java.time.Instant;
import java.time.temporal.ChronoUnit;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.hl7.fhir.r4.model.Observation;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.lungflag.service.e2e.SandboxServer;
import org.lungflag.service.offline.PatientRun;
import org.springframework.context.ConfigurableApplicationContext;
import org.springframework.jdbc.core.simple.JdbcClient;

/**
 * The service is stopped in the middle of a stream of notifications (its Spring context closed while inbox rows and
 * Flag writes are in flight) and started again on the same H2 file database. The notifications the server sent
 * meanwhile are lost, as HAPI drops them after about a minute of failed deliveries: here they are simply never
 * delivered. The catch-up search (from the persisted watermark) must recover every one, and the result must be what
 * one evaluator computes from all the records ({@link org.lungflag.service.offline.OfflineEvaluation}): no loss, no
 * duplicate Flag, no Provenance twice. Hydration at first sight is off so that only the catch-up search can find the
 * lost records. Clinical values: see {@link Harness} (Berlin 2012 bands).
 */
class ServiceRestartCatchUpTest {

    private static final int PATIENTS = 3;

    @TempDir
    Path dir;

    @Test
    void notificationsLostWhileTheServiceWasDownAreRecoveredByTheCatchUpSearchWithNoDuplicates() throws Exception {
        String url = "jdbc:h2:file:" + dir.resolve("lungflag")
                + ";MODE=PostgreSQL;DATABASE_TO_LOWER=TRUE;DEFAULT_NULL_ORDERING=HIGH;AUTO_SERVER=FALSE";
        int port = SandboxServer.freePort();
        String[] args = {"--spring.datasource.url=" + url, "--lungflag.evaluation.hydrate=false"};
        Instant t0 = Instant.now().minus(20, ChronoUnit.HOURS).truncatedTo(ChronoUnit.MINUTES);
        Map<String, List<Observation>> records = new LinkedHashMap<>();
        Map<String, List<Observation>> course = new LinkedHashMap<>();
        for (int i = 0; i < PATIENTS; i++) {
            String p = Harness.newPatient("restart");
            records.put(p, new ArrayList<>());
            course.put(p, Harness.ventilatedCourse(p, t0, true));
        }

        ConfigurableApplicationContext first =
                Harness.service(port, SandboxServer.server().baseUrl(), args);
        JdbcClient jdbc1 = first.getBean(JdbcClient.class);
        try {
            // the first gas of every patient is processed and its Flag written
            for (var e : course.entrySet()) {
                for (Observation o : e.getValue().subList(0, 5)) {
                    Observation created = Harness.create(o);
                    records.get(e.getKey()).add(created);
                    assertThat(Harness.deliver(port, created)).isEqualTo(200);
                }
            }
            await().atMost(Duration.ofSeconds(90)).until(() -> Harness.settled(jdbc1));
            // then a burst, and the service stops while it is being processed
            for (var e : course.entrySet()) {
                for (Observation o : e.getValue().subList(5, 9)) {
                    Observation created = Harness.create(o);
                    records.get(e.getKey()).add(created);
                    assertThat(Harness.deliver(port, created)).isEqualTo(200);
                }
            }
        } finally {
            first.close();
        }

        // while it is down: the rest of each course is written to the server and its notifications are lost
        List<String> lost = new ArrayList<>();
        for (var e : course.entrySet()) {
            for (Observation o : e.getValue().subList(9, e.getValue().size())) {
                Observation created = Harness.create(o);
                records.get(e.getKey()).add(created);
                lost.add(created.getIdElement().getIdPart());
            }
        }

        ConfigurableApplicationContext second =
                Harness.service(port, SandboxServer.server().baseUrl(), args);
        try {
            JdbcClient jdbc = second.getBean(JdbcClient.class);
            await().atMost(Duration.ofSeconds(120))
                    .pollInterval(Duration.ofMillis(500))
                    .untilAsserted(() -> {
                        for (var e : records.entrySet()) {
                            assertThat(Harness.receivedIds(jdbc, e.getKey()))
                                    .containsExactlyInAnyOrderElementsOf(e.getValue().stream()
                                            .map(o -> o.getIdElement().getIdPart())
                                            .toList());
                        }
                        assertThat(Harness.settled(jdbc)).isTrue();
                    });
            // the lost ones came through the catch-up search
            assertThat(jdbc.sql("SELECT DISTINCT channel FROM received_resource WHERE resource_id IN (:ids)")
                            .param("ids", lost)
                            .query(String.class)
                            .list())
                    .containsExactly("CATCH_UP");
            for (var e : records.entrySet()) {
                String p = e.getKey();
                PatientRun run = Harness.offline(second, p, e.getValue());
                assertThat(Harness.liveEvaluations(jdbc, p))
                        .as("evaluations of Patient/%s", p)
                        .containsExactlyInAnyOrderElementsOf(Harness.offlineEvaluations(run));
                List<String> standing = Harness.standing(Harness.flagsOf(p));
                assertThat(standing)
                        .as("Flags of Patient/%s", p)
                        .containsExactlyInAnyOrderElementsOf(Harness.offlineStanding(second, run));
                // moderate at t0, severe at +2 h, resolved after 6 h with no band met (+11 h)
                assertThat(standing).singleElement().asString().endsWith("hypoxemia-severe inactive");
                Harness.assertOneFlagPerEpisodeAndOneProvenancePerVersion(p, false);
            }
            long rows = Harness.count(jdbc, "SELECT COUNT(*) FROM received_resource");
            System.out.printf(
                    "restart: %d Observations over %d patients, %d lost while the service was down, all recovered;"
                            + " %d received rows, %d Flag writes delivered%n",
                    records.values().stream().mapToInt(List::size).sum(),
                    PATIENTS,
                    lost.size(),
                    rows,
                    Harness.count(jdbc, "SELECT COUNT(*) FROM outbox WHERE status = 'DELIVERED'"));
        } finally {
            second.close();
        }
    }
}
