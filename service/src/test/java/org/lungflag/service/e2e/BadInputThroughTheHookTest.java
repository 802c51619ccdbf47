package org.lungflag.service.e2e;

import static org.assertj.core.api.Assertions.assertThat;
import static org.awaitility.Awaitility.await;

import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.time.Duration;
import java.time.Instant;
import java.time.temporal.ChronoUnit;
import java.util.List;
import java.util.UUID;
import org.junit.jupiter.api.Test;
import org.lungflag.service.audit.QuarantineEntry;
import org.lungflag.service.audit.QuarantineRepository;
import org.springframework.beans.factory.annotation.Autowired;
import org.springframework.boot.test.context.SpringBootTest;
import org.springframework.boot.test.web.server.LocalServerPort;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.test.annotation.DirtiesContext;
import org.springframework.test.context.ActiveProfiles;
import org.springframework.test.context.DynamicPropertyRegistry;
import org.springframework.test.context.DynamicPropertySource;

/**
 * Bad input through the rest-hook receiver: each unusable Observation is quarantined with the data-quality reason
 * that names what was wrong, a venous PO2 is kept but never used as PaO2, and the pipeline keeps going (a good
 * Observation sent after the bad ones is evaluated). Plausibility ranges are common practice (clinical-reference
 * §0, no single source). Data invented.
 */
@DirtiesContext(classMode = DirtiesContext.ClassMode.AFTER_CLASS)
@SpringBootTest(webEnvironment = SpringBootTest.WebEnvironment.DEFINED_PORT)
@ActiveProfiles("test")
class BadInputThroughTheHookTest {

    @DynamicPropertySource
    static void sandbox(DynamicPropertyRegistry registry) {
        SandboxServer.register(registry);
        registry.add("lungflag.intake.register-subscriptions", () -> "false");
        registry.add("lungflag.evaluation.hydrate", () -> "false");
    }

    @LocalServerPort
    int port;

    @Autowired
    QuarantineRepository quarantine;

    @Autowired
    JdbcClient jdbc;

    private final String patient = "bad-" + UUID.randomUUID().toString().substring(0, 8);
    private final Instant t0 = Instant.now().minus(2, ChronoUnit.HOURS).truncatedTo(ChronoUnit.MINUTES);

    private int put(String id, String json) throws Exception {
        return HttpClient.newHttpClient()
                .send(
                        HttpRequest.newBuilder(URI.create("http://127.0.0.1:" + port + "/fhir-hook/Observation/" + id))
                                .header("Authorization", "Bearer test-hook-token")
                                .header("Content-Type", "application/fhir+json")
                                .PUT(HttpRequest.BodyPublishers.ofString(json))
                                .build(),
                        HttpResponse.BodyHandlers.ofString())
                .statusCode();
    }

    private String obs(String id, String code, String value, String subject) {
        return """
                {"resourceType":"Observation","id":"%s","meta":{"versionId":"1"},"status":"final",
                 "code":{"coding":[{"system":"http://loinc.org","code":"%s"}]},%s
                 "effectiveDateTime":"%s",%s}
                """.formatted(id, code, subject, t0, value);
    }

    private String subject() {
        return "\"subject\":{\"reference\":\"Patient/" + patient + "\"},";
    }

    private static String qty(double v, String unit) {
        return "\"valueQuantity\":{\"value\":" + v + ",\"system\":\"http://unitsofmeasure.org\",\"code\":\"" + unit
                + "\"}";
    }

    private String reasonOf(String id) {
        List<QuarantineEntry> entries = quarantine.forResource("Observation", id);
        return entries.isEmpty() ? null : entries.get(0).reasonCode();
    }

    @Test
    void quarantinesEachBadObservationWithItsReasonAndKeepsGoing() throws Exception {
        String u = UUID.randomUUID().toString().substring(0, 6);
        assertThat(put("unknown-" + u, obs("unknown-" + u, "8867-4", qty(80, "/min"), subject())))
                .isEqualTo(200);
        assertThat(put("unit-" + u, obs("unit-" + u, "2703-7", qty(80, "mmHg"), subject())))
                .isEqualTo(200);
        assertThat(put("implausible-" + u, obs("implausible-" + u, "2703-7", qty(2000, "mm[Hg]"), subject())))
                .isEqualTo(200);
        assertThat(put("nosubject-" + u, obs("nosubject-" + u, "2703-7", qty(80, "mm[Hg]"), "")))
                .isEqualTo(200);
        assertThat(put("fio2-" + u, obs("fio2-" + u, "19994-3", qty(15, "%"), subject())))
                .isEqualTo(200);
        assertThat(put("venous-" + u, obs("venous-" + u, "2705-2", qty(40, "mm[Hg]"), subject())))
                .isEqualTo(200);
        // a good one after the bad ones
        assertThat(put("good-" + u, obs("good-" + u, "2019-8", qty(41, "mm[Hg]"), subject())))
                .isEqualTo(200);

        await().atMost(Duration.ofSeconds(60)).untilAsserted(() -> {
            assertThat(reasonOf("unknown-" + u)).isEqualTo("unknown-code");
            assertThat(reasonOf("unit-" + u)).isEqualTo("unknown-unit");
            assertThat(reasonOf("implausible-" + u)).isEqualTo("implausible-value");
            assertThat(reasonOf("nosubject-" + u)).isEqualTo("missing-subject");
            assertThat(reasonOf("fio2-" + u)).isEqualTo("fio2-below-room-air");
        });
        await().atMost(Duration.ofSeconds(60))
                .untilAsserted(
                        () -> assertThat(jdbc.sql("SELECT outcome FROM received_resource WHERE resource_id = :id")
                                        .param("id", "good-" + u)
                                        .query(String.class)
                                        .list())
                                .containsExactly("USED"));
        // the venous PO2 is accepted as what it is (venous), and never quarantined
        assertThat(reasonOf("venous-" + u)).isNull();
        assertThat(jdbc.sql("SELECT specimen FROM normalized_value WHERE source_id = :id")
                        .param("id", "venous-" + u)
                        .query(String.class)
                        .list())
                .containsExactly("VENOUS");
    }
}
