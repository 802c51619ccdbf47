package org.lungflag.service.evaluation;

import static org.assertj.core.api.Assertions.assertThat;
import static org.awaitility.Awaitility.await;
import static org.mockito.ArgumentMatchers.any;
import static org.mockito.ArgumentMatchers.anyInt;
import static org.mockito.ArgumentMatchers.anyString;
import static org.mockito.Mockito.atLeast;
import static org.mockito.Mockito.doThrow;
import static org.mockito.Mockito.verify;

import java.time.Duration;
import java.util.Map;
import org.junit.jupiter.api.Test;
import org.lungflag.service.e2e.SandboxServer;
import org.lungflag.service.intake.InboxChannel;
import org.lungflag.service.intake.InboxRepository;
import org.springframework.beans.factory.annotation.Autowired;
import org.springframework.boot.actuate.health.HealthContributorRegistry;
import org.springframework.boot.actuate.health.HealthIndicator;
import org.springframework.boot.actuate.health.Status;
import org.springframework.boot.test.context.SpringBootTest;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.test.annotation.DirtiesContext;
import org.springframework.test.context.ActiveProfiles;
import org.springframework.test.context.DynamicPropertyRegistry;
import org.springframework.test.context.DynamicPropertySource;
import org.springframework.test.context.bean.override.mockito.MockitoSpyBean;

/**
 * The inbox has one processing thread. An {@link Error} thrown inside a round (a library's stack overflow on a
 * pathological resource, a failed allocation) must not end it: the hook would go on acknowledging notifications that
 * nobody evaluates. The thread logs the failure and takes the next round; health says whether it runs.
 */
@DirtiesContext(classMode = DirtiesContext.ClassMode.AFTER_CLASS)
@SpringBootTest
@ActiveProfiles("test")
class InboxProcessorSurvivesErrorsTest {

    @DynamicPropertySource
    static void sandbox(DynamicPropertyRegistry registry) {
        SandboxServer.register(registry);
    }

    @MockitoSpyBean
    InboxRepository inbox;

    @Autowired
    InboxProcessor processor;

    @Autowired
    JdbcClient jdbc;

    @Autowired
    HealthContributorRegistry health;

    @Test
    void aRoundThatThrowsAnErrorDoesNotStopTheProcessingThread() {
        await().atMost(Duration.ofSeconds(30)).until(processor::processing);
        // stubbing a spy while another thread calls it is not safe (Mockito may see an unfinished stubbing): the
        // processing thread is stopped meanwhile, and the one started after meets the Error on its first claim
        processor.stop();
        doThrow(new StackOverflowError("thrown by the test"))
                .doCallRealMethod()
                .when(inbox)
                .claim(anyString(), anyInt(), any(Duration.class));
        processor.start();

        long id = inbox.add(
                "Observation",
                "survives-1",
                "1",
                InboxChannel.REST_HOOK,
                "{\"resourceType\":\"Observation\",\"id\":\"survives-1\",\"meta\":{\"versionId\":\"1\"},"
                        + "\"status\":\"final\",\"code\":{\"text\":\"not a coded value\"}}");

        // the thread met the Error, then went on claiming: the row was taken up
        await().atMost(Duration.ofSeconds(30))
                .pollInterval(Duration.ofMillis(200))
                .until(() -> !"NEW".equals(status(id)));
        verify(inbox, atLeast(2)).claim(anyString(), anyInt(), any(Duration.class));
        assertThat(processor.processing()).isTrue();
        Map<String, Object> details = writeBack().health().getDetails();
        assertThat(details).containsEntry("inboxProcessor", "running");
        assertThat(writeBack().health().getStatus()).isNotEqualTo(Status.DOWN);

        // and health says so when the thread does not run
        processor.stop();
        assertThat(writeBack().health().getStatus()).isEqualTo(Status.DOWN);
        assertThat(writeBack().health().getDetails()).containsEntry("inboxProcessor", "stopped");
        processor.start();
        await().atMost(Duration.ofSeconds(10)).until(processor::processing);
    }

    private HealthIndicator writeBack() {
        return (HealthIndicator) health.getContributor("writeBack");
    }

    private String status(long id) {
        return jdbc.sql("SELECT status FROM intake_inbox WHERE id = :id")
                .param("id", id)
                .query(String.class)
                .single();
    }
}
