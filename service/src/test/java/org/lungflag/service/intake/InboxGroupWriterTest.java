package org.lungflag.service.intake;

import static org.assertj.core.api.Assertions.assertThat;
import static org.awaitility.Awaitility.await;
import static org.mockito.ArgumentMatchers.anyList;
import static org.mockito.Mockito.doAnswer;

import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import java.util.concurrent.CompletableFuture;
import java.util.concurrent.CountDownLatch;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.TimeUnit;
import org.junit.jupiter.api.AfterEach;
import org.junit.jupiter.api.Test;
import org.springframework.beans.factory.annotation.Autowired;
import org.springframework.boot.test.context.SpringBootTest;
import org.springframework.dao.DataIntegrityViolationException;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.test.context.ActiveProfiles;
import org.springframework.test.context.TestPropertySource;
import org.springframework.test.context.bean.override.mockito.MockitoSpyBean;

/**
 * Group commit at the rest-hook: callers whose rows wait together share one transaction, each caller returns only
 * after its row committed, and a row the database refuses fails only its own caller. The writer is held on its first
 * group (a spy on the repository waits on a latch) so the next group's make-up does not depend on timing.
 */
@SpringBootTest
@ActiveProfiles("test")
@TestPropertySource(
        properties = {
            "lungflag.fhir.base-url=http://127.0.0.1:9/fhir",
            // nothing else may call the spied repository while the test stubs it
            "lungflag.evaluation.processor-enabled=false",
            "lungflag.intake.catch-up-interval=1h",
            // the backlog gauges read the repository every 10 s by default: a read while Mockito stubs the spy
            // breaks the stubbing (UnfinishedStubbingException, seen once in CI)
            "lungflag.metrics.refresh=1h"
        })
class InboxGroupWriterTest {

    @MockitoSpyBean
    InboxRepository inbox;

    @Autowired
    InboxGroupWriter writer;

    @Autowired
    JdbcClient jdbc;

    private final ExecutorService callers = Executors.newFixedThreadPool(40);

    @AfterEach
    void stopCallers() {
        callers.shutdownNow();
    }

    @Test
    void rowsWaitingTogetherAreCommittedInOneTransaction() throws Exception {
        Hold hold = holdNextGroup();
        long before = writer.groupsCommitted();
        List<CompletableFuture<Void>> calls = new ArrayList<>();
        calls.add(call("gc-first"));
        assertThat(hold.entered().await(10, TimeUnit.SECONDS)).isTrue(); // taken up alone, held
        for (int i = 0; i < 30; i++) {
            calls.add(call("gc-" + i));
        }
        await().atMost(Duration.ofSeconds(10)).until(() -> writer.waiting() == 30);
        // nobody is acknowledged before their row commits
        assertThat(calls).noneMatch(CompletableFuture::isDone);
        assertThat(rows("gc-%")).isZero();

        hold.release().countDown();
        CompletableFuture.allOf(calls.toArray(CompletableFuture[]::new)).get(30, TimeUnit.SECONDS);

        assertThat(rows("gc-%")).isEqualTo(31);
        // the held row alone, then the 30 that waited meanwhile together (at most 100 to a group by default)
        assertThat(writer.groupsCommitted() - before).isEqualTo(2);
    }

    @Test
    void aRowTheDatabaseRefusesFailsOnlyItsCaller() throws Exception {
        Hold hold = holdNextGroup();
        CompletableFuture<Void> first = call("refuse-first");
        assertThat(hold.entered().await(10, TimeUnit.SECONDS)).isTrue();
        List<CompletableFuture<Void>> good = new ArrayList<>();
        for (int i = 0; i < 5; i++) {
            good.add(call("refuse-ok-" + i));
        }
        // resource_type is at most 64 characters in the schema: the database refuses this row
        String tooLong = "Observation".repeat(7);
        CompletableFuture<Void> bad = CompletableFuture.runAsync(
                () -> writer.add(inbox.row(tooLong, "refuse-bad", "1", InboxChannel.REST_HOOK, "{}")), callers);
        await().atMost(Duration.ofSeconds(10)).until(() -> writer.waiting() == 6);

        hold.release().countDown();
        first.get(30, TimeUnit.SECONDS);
        CompletableFuture.allOf(good.toArray(CompletableFuture[]::new)).get(30, TimeUnit.SECONDS);
        assertThat(bad)
                .failsWithin(Duration.ofSeconds(30))
                .withThrowableOfType(java.util.concurrent.ExecutionException.class)
                .withCauseInstanceOf(DataIntegrityViolationException.class);

        assertThat(rows("refuse-ok-%")).isEqualTo(5);
        assertThat(rows("refuse-bad")).isZero();
    }

    /** {@code entered} opens when the writer's next group is inside its transaction; it waits there for {@code release}. */
    private record Hold(CountDownLatch entered, CountDownLatch release) {}

    private Hold holdNextGroup() {
        Hold hold = new Hold(new CountDownLatch(1), new CountDownLatch(1));
        doAnswer(invocation -> {
                    if (hold.entered().getCount() > 0) {
                        hold.entered().countDown();
                        hold.release().await(30, TimeUnit.SECONDS);
                    }
                    return invocation.callRealMethod();
                })
                .when(inbox)
                .addAll(anyList());
        return hold;
    }

    private CompletableFuture<Void> call(String id) {
        return CompletableFuture.runAsync(
                () -> writer.add(inbox.row(
                        "Observation",
                        id,
                        "1",
                        InboxChannel.REST_HOOK,
                        "{\"resourceType\":\"Observation\",\"id\":\"" + id + "\"}")),
                callers);
    }

    private long rows(String idPattern) {
        return jdbc.sql("SELECT COUNT(*) FROM intake_inbox WHERE resource_id LIKE :p")
                .param("p", idPattern)
                .query(Long.class)
                .single();
    }
}
