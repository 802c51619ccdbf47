package org.lungflag.service.reliability;

import static org.assertj.core.api.Assertions.assertThat;
import static org.awaitility.Awaitility.await;

import java.time.Duration;
import java.time.Instant;
import java.time.temporal.ChronoUnit;
import java.util.ArrayList;
import java.util.Collections;
import java.util.List;
import java.util.Random;
import org.hl7.fhir.r4.model.Observation;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.lungflag.service.e2e.SandboxServer;
import org.lungflag.service.offline.PatientRun;
import org.springframework.context.ConfigurableApplicationContext;
import org.springframework.jdbc.core.simple.JdbcClient;

/**
 * Duplicated, reordered and late deliveries through the rest-hook (design invariants 2 and 3): patients with the same
 * records at the same clinical times, one delivered once in clinical order and waited on, the others shuffled, each
 * notification sent one to three times, half of them only after the rest were processed, then a few sent once more
 * at the end. Every patient must end with the same evaluations and the same standing Flags as the ordered one, and
 * as one evaluator over the same records ({@link org.lungflag.service.offline.OfflineEvaluation}, the path replay
 * uses). Hydration at first sight is off, so the order is the one the test delivers. Clinical values: see {@link
 * Harness} (Berlin 2012 bands).
 */
class DeliveryOrderTest {

    private static final long[] SEEDS = {11, 2026, 424242};

    static ConfigurableApplicationContext service;
    static int port;
    static JdbcClient jdbc;

    @BeforeAll
    static void start() {
        port = SandboxServer.freePort();
        service = Harness.service(port, SandboxServer.server().baseUrl(), "--lungflag.evaluation.hydrate=false");
        jdbc = service.getBean(JdbcClient.class);
    }

    @AfterAll
    static void stop() {
        if (service != null) {
            service.close();
        }
    }

    private static List<Observation> createCourse(String p, Instant t0) {
        return Harness.ventilatedCourse(p, t0, true).stream()
                .map(Harness::create)
                .toList();
    }

    private static void awaitProcessed(String p, List<Observation> records) {
        List<String> ids =
                records.stream().map(o -> o.getIdElement().getIdPart()).toList();
        await().atMost(Duration.ofSeconds(90))
                .until(() -> Harness.receivedIds(jdbc, p).containsAll(ids) && Harness.settled(jdbc));
    }

    @Test
    void duplicatedReorderedAndLateDeliveriesGiveTheSameAdvisoriesAsOneOrderedDelivery() throws Exception {
        Instant t0 = Instant.now().minus(20, ChronoUnit.HOURS).truncatedTo(ChronoUnit.MINUTES);

        String ordered = Harness.newPatient("ordered");
        List<Observation> orderedRecords = createCourse(ordered, t0);
        for (int i = 0; i < orderedRecords.size(); i++) {
            assertThat(Harness.deliver(port, orderedRecords.get(i))).isEqualTo(200);
            awaitProcessed(ordered, orderedRecords.subList(0, i + 1));
        }

        List<String> shuffledPatients = new ArrayList<>();
        List<List<Observation>> shuffledRecords = new ArrayList<>();
        int deliveries = 0;
        for (long seed : SEEDS) {
            Random random = new Random(seed);
            String p = Harness.newPatient("shuffled");
            List<Observation> records = createCourse(p, t0);
            shuffledPatients.add(p);
            shuffledRecords.add(records);
            List<Observation> order = new ArrayList<>(records);
            Collections.shuffle(order, random);
            int half = order.size() / 2;
            for (List<Observation> part : List.of(order.subList(0, half), order.subList(half, order.size()))) {
                List<Observation> sends = new ArrayList<>();
                for (Observation o : part) {
                    for (int n = 1 + random.nextInt(3); n > 0; n--) {
                        sends.add(o);
                    }
                }
                Collections.shuffle(sends, random);
                for (Observation o : sends) {
                    assertThat(Harness.deliver(port, o)).isEqualTo(200);
                    deliveries++;
                }
                awaitProcessed(p, part); // the second half arrives late, after the first was evaluated
            }
            for (int n = 0; n < 3; n++) { // redeliveries long after
                assertThat(Harness.deliver(port, records.get(random.nextInt(records.size()))))
                        .isEqualTo(200);
                deliveries++;
            }
            awaitProcessed(p, records);
        }

        List<Harness.Row> reference = Harness.liveEvaluations(jdbc, ordered).stream()
                .map(Harness.Row::anonymous)
                .toList();
        PatientRun orderedRun = Harness.offline(service, ordered, orderedRecords);
        assertThat(Harness.liveEvaluations(jdbc, ordered))
                .containsExactlyInAnyOrderElementsOf(Harness.offlineEvaluations(orderedRun));
        List<String> referenceFlags = withoutKey(Harness.standing(Harness.flagsOf(ordered)));
        assertThat(referenceFlags).containsExactly("hypoxemia-severe inactive");
        Harness.assertOneFlagPerEpisodeAndOneProvenancePerVersion(ordered, true);

        for (int i = 0; i < shuffledPatients.size(); i++) {
            String p = shuffledPatients.get(i);
            assertThat(Harness.liveEvaluations(jdbc, p).stream().map(Harness.Row::anonymous))
                    .as("evaluations of Patient/%s (seed %d) against the ordered delivery", p, SEEDS[i])
                    .containsExactlyInAnyOrderElementsOf(reference);
            PatientRun run = Harness.offline(service, p, shuffledRecords.get(i));
            assertThat(Harness.liveEvaluations(jdbc, p))
                    .as("evaluations of Patient/%s against the offline evaluation", p)
                    .containsExactlyInAnyOrderElementsOf(Harness.offlineEvaluations(run));
            List<String> standing = Harness.standing(Harness.flagsOf(p));
            assertThat(standing)
                    .as("Flags of Patient/%s", p)
                    .containsExactlyInAnyOrderElementsOf(Harness.offlineStanding(service, run));
            assertThat(withoutKey(standing)).isEqualTo(referenceFlags);
            Harness.assertOneFlagPerEpisodeAndOneProvenancePerVersion(p, false);
        }
        System.out.printf(
                "delivery order: %d records per patient; 1 ordered delivery, %d shuffled patients with %d deliveries"
                        + " (duplicates, late halves, redeliveries); same evaluations and Flags%n",
                orderedRecords.size(), shuffledPatients.size(), deliveries);
    }

    private static List<String> withoutKey(List<String> standing) {
        return standing.stream().map(s -> s.substring(s.indexOf(' ') + 1)).toList();
    }
}
