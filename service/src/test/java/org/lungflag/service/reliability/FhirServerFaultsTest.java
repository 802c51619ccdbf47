package org.lungflag.service.reliability;

import static org.assertj.core.api.Assertions.assertThat;
import static org.awaitility.Awaitility.await;
import static org.lungflag.service.reliability.Harness.count;

import java.time.Duration;
import java.time.Instant;
import java.time.temporal.ChronoUnit;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import org.hl7.fhir.r4.model.Flag;
import org.hl7.fhir.r4.model.Observation;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.lungflag.service.e2e.SandboxServer;
import org.springframework.context.ConfigurableApplicationContext;
import org.springframework.jdbc.core.simple.JdbcClient;

/**
 * The FHIR server goes away, or becomes slow, while advisories are due. The service reaches the embedded FHIR server
 * through a {@link FaultProxy}; rest-hook deliveries (played by the test) reach the service directly, as when the
 * path from the service to the server fails but the server's notifications still arrive.
 *
 * <p>"Down for several minutes" is scaled to tens of seconds with a short backoff (200 ms doubling to 2 s instead of
 * 2 s to 5 min): the first write of each episode fails eight times during the outage, as it would over minutes with the default
 * settings. Clinical values: see {@link Harness} (Berlin 2012 bands).
 */
class FhirServerFaultsTest {

    private static final int RETRIES = 8;

    static FaultProxy proxy;
    static ConfigurableApplicationContext service;
    static int port;
    static JdbcClient jdbc;

    @BeforeAll
    static void start() {
        proxy = new FaultProxy("127.0.0.1", SandboxServer.server().port());
        port = SandboxServer.freePort();
        service = Harness.service(port, "http://127.0.0.1:" + proxy.port() + "/fhir");
        jdbc = service.getBean(JdbcClient.class);
    }

    @AfterAll
    static void stop() {
        if (service != null) {
            service.close();
        }
        if (proxy != null) {
            proxy.close();
        }
    }

    /** Known patients (demographics read, recent records loaded) with their ventilator settings processed. */
    private static Map<String, List<Observation>> knownPatients(String prefix, int n, Instant t0) {
        Map<String, List<Observation>> records = new HashMap<>();
        for (int i = 0; i < n; i++) {
            String p = Harness.newPatient(prefix);
            List<Observation> stored = new ArrayList<>();
            for (Observation o : Harness.ventilatedCourse(p, t0, false).subList(0, 4)) {
                Observation created = Harness.create(o);
                stored.add(created);
                assertThat(Harness.deliver(port, created)).isEqualTo(200);
            }
            records.put(p, stored);
        }
        await().atMost(Duration.ofSeconds(90))
                .until(() -> Harness.settled(jdbc)
                        && records.keySet().stream()
                                .allMatch(p -> Harness.receivedIds(jdbc, p).size() == 4));
        return records;
    }

    @Test
    void advisoriesDueWhileTheFhirServerIsUnreachableAreAllWrittenOnceAfterItReturns() {
        Instant t0 = Instant.now().minus(20, ChronoUnit.HOURS).truncatedTo(ChronoUnit.MINUTES);
        Map<String, List<Observation>> records = knownPatients("down", 3, t0);
        long outboxBefore = count(jdbc, "SELECT COUNT(*) FROM outbox");

        long began = System.nanoTime();
        Duration outage;
        proxy.stop();
        try {
            // the blood gases (and the settings before the second) arrive while the server cannot be reached
            for (var e : records.entrySet()) {
                for (Observation o :
                        Harness.ventilatedCourse(e.getKey(), t0, false).subList(4, 8)) {
                    Observation created = Harness.create(o); // straight to the server, not through the proxy
                    e.getValue().add(created);
                    assertThat(Harness.deliver(port, created)).isEqualTo(200);
                }
            }
            // evaluated and queued (at least one Flag write per patient), none delivered
            await().atMost(Duration.ofSeconds(60))
                    .until(() -> count(jdbc, "SELECT COUNT(*) FROM outbox WHERE kind = 'FLAG' AND id > " + outboxBefore)
                            >= records.size());
            // the outage lasts until the first queued write of every episode has failed RETRIES times (about 10 s
            // of backoff); later writes of an episode wait behind its first
            await().atMost(Duration.ofSeconds(90))
                    .pollInterval(Duration.ofMillis(500))
                    .until(() -> count(
                                    jdbc,
                                    "SELECT COUNT(*) FROM outbox WHERE attempts >= " + RETRIES + " AND id > "
                                            + outboxBefore)
                            >= records.size());
            outage = Duration.ofNanos(System.nanoTime() - began);
            assertThat(count(jdbc, "SELECT COUNT(*) FROM outbox WHERE status = 'DELIVERED' AND id > " + outboxBefore))
                    .isZero();
            records.keySet().forEach(p -> assertThat(Harness.flagsOf(p)).isEmpty());
        } finally {
            proxy.start();
        }

        await().atMost(Duration.ofSeconds(120)).until(() -> Harness.settled(jdbc));
        assertThat(count(jdbc, "SELECT COUNT(*) FROM outbox WHERE status <> 'DELIVERED' AND id > " + outboxBefore))
                .isZero();
        for (String p : records.keySet()) {
            List<Flag> flags = Harness.flagsOf(p);
            // one episode: onset moderate, escalated to severe in place
            assertThat(flags).hasSize(1);
            assertThat(flags.get(0).getCode().getCodingFirstRep().getCode()).isEqualTo("hypoxemia-severe");
            assertThat(flags.get(0).getStatus()).isEqualTo(Flag.FlagStatus.ACTIVE);
            Harness.assertOneFlagPerEpisodeAndOneProvenancePerVersion(p, true);
        }
        System.out.printf(
                "FHIR server unreachable for %d s (the first write of each episode failed %d times): %d Flag writes queued,"
                        + " all delivered after it returned%n",
                outage.toSeconds(),
                RETRIES,
                count(jdbc, "SELECT COUNT(*) FROM outbox WHERE kind = 'FLAG' AND id > " + outboxBefore));
    }

    @Test
    void withASlowFhirServerIntakeKeepsAcknowledgingAndTheOutboxGrowsThenDrains() {
        Instant t0 = Instant.now().minus(20, ChronoUnit.HOURS).truncatedTo(ChronoUnit.MINUTES);
        Map<String, List<Observation>> records = knownPatients("slow", 3, t0);
        long outboxBefore = count(jdbc, "SELECT COUNT(*) FROM outbox");

        proxy.delay(Duration.ofSeconds(2));
        try {
            int acknowledged = 0;
            long maxBacklog = 0;
            for (var e : records.entrySet()) {
                for (Observation o :
                        Harness.ventilatedCourse(e.getKey(), t0, false).subList(4, 8)) {
                    Observation created = Harness.create(o);
                    e.getValue().add(created);
                    // the hook answers from the inbox commit, never waiting on the FHIR server
                    assertThat(Harness.deliver(port, created)).isEqualTo(200);
                    acknowledged++;
                    maxBacklog = Math.max(maxBacklog, backlog(outboxBefore));
                }
            }
            long[] seen = {maxBacklog};
            await().atMost(Duration.ofSeconds(60)).until(() -> {
                seen[0] = Math.max(seen[0], backlog(outboxBefore));
                return seen[0] >= records.size();
            });
            // drains with the delay still on: each Flag write is a transaction, a search and a create, seconds each
            await().atMost(Duration.ofSeconds(180)).until(() -> Harness.settled(jdbc));
            System.out.printf(
                    "slow FHIR server (+2 s per request): %d notifications acknowledged, outbox backlog peaked at %d,"
                            + " drained%n",
                    acknowledged, seen[0]);
        } finally {
            proxy.delay(Duration.ZERO);
        }
        for (String p : records.keySet()) {
            assertThat(Harness.flagsOf(p))
                    .singleElement()
                    .satisfies(f -> assertThat(f.getCode().getCodingFirstRep().getCode())
                            .isEqualTo("hypoxemia-severe"));
            Harness.assertOneFlagPerEpisodeAndOneProvenancePerVersion(p, true);
        }
    }

    private static long backlog(long after) {
        return count(jdbc, "SELECT COUNT(*) FROM outbox WHERE status IN ('PENDING', 'SENDING') AND id > " + after);
    }
}
