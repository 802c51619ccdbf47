package org.lungflag.service.intake;

import static org.assertj.core.api.Assertions.assertThat;

import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.lungflag.service.audit.QuarantineRepository;
import org.springframework.beans.factory.annotation.Autowired;
import org.springframework.boot.test.context.SpringBootTest;
import org.springframework.boot.test.web.server.LocalServerPort;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.test.context.ActiveProfiles;
import org.springframework.test.context.TestPropertySource;

/**
 * The rest-hook receiver's contract (design.md "Rest-hook receiver"): bearer token required, payload recorded
 * before the acknowledgement, bad bodies refused with a status and quarantined with a reason.
 */
@SpringBootTest(webEnvironment = SpringBootTest.WebEnvironment.RANDOM_PORT)
@ActiveProfiles("test")
@TestPropertySource(
        properties = {"lungflag.fhir.base-url=http://127.0.0.1:9/fhir", "lungflag.intake.max-body-bytes=20000"})
class HookEndpointTest {

    private static final String OBSERVATION = """
            {"resourceType":"Observation","id":"abg-1","meta":{"versionId":"2"},"status":"final",
             "code":{"coding":[{"system":"http://loinc.org","code":"2703-7"}]},
             "subject":{"reference":"Patient/p1"},"effectiveDateTime":"2026-11-30T03:10:00Z",
             "valueQuantity":{"value":80,"unit":"mmHg","system":"http://unitsofmeasure.org","code":"mm[Hg]"}}
            """;

    @LocalServerPort
    int port;

    @Autowired
    JdbcClient jdbc;

    @Autowired
    QuarantineRepository quarantine;

    private final HttpClient http = HttpClient.newHttpClient();

    private HttpResponse<String> put(String path, String token, String body) throws Exception {
        HttpRequest.Builder b = HttpRequest.newBuilder(URI.create("http://127.0.0.1:" + port + path))
                .header("Content-Type", "application/fhir+json")
                .PUT(HttpRequest.BodyPublishers.ofString(body));
        if (token != null) {
            b.header("Authorization", "Bearer " + token);
        }
        return http.send(b.build(), HttpResponse.BodyHandlers.ofString());
    }

    private long inboxRows(String id) {
        return jdbc.sql("SELECT COUNT(*) FROM intake_inbox WHERE resource_id = :id")
                .param("id", id)
                .query(Long.class)
                .single();
    }

    @Test
    void refusesACallWithoutTheBearerTokenAndRecordsNothing() throws Exception {
        String body = OBSERVATION.replace("abg-1", "abg-401");
        HttpResponse<String> response = put("/fhir-hook/Observation/abg-401", null, body);
        assertThat(response.statusCode()).isEqualTo(401);
        assertThat(response.headers().firstValue("WWW-Authenticate"))
                .hasValueSatisfying(v -> assertThat(v).startsWith("Bearer"));
        assertThat(put("/fhir-hook/Observation/abg-1", "wrong-token", OBSERVATION)
                        .statusCode())
                .isEqualTo(401);
        assertThat(inboxRows("abg-1")).isZero();
    }

    @Test
    void recordsTheObservationBeforeAcknowledging() throws Exception {
        HttpResponse<String> response = put("/fhir-hook/Observation/abg-1", "test-hook-token", OBSERVATION);
        assertThat(response.statusCode()).isEqualTo(200);
        assertThat(jdbc.sql("SELECT version_id FROM intake_inbox WHERE resource_id = 'abg-1' AND channel = 'REST_HOOK'")
                        .query(String.class)
                        .list())
                .contains("2");
    }

    @Test
    void refusesMalformedJsonWith400AndQuarantinesIt() throws Exception {
        HttpResponse<String> response =
                put("/fhir-hook/Observation/broken-1", "test-hook-token", "{\"resourceType\":\"Observation\",");
        assertThat(response.statusCode()).isEqualTo(400);
        assertThat(response.body()).contains("OperationOutcome").contains("not a parseable FHIR R4 JSON resource");
        assertThat(quarantine.forResource("Observation", "broken-1"))
                .singleElement()
                .satisfies(q -> assertThat(q.reasonCode()).isEqualTo("malformed-resource"));
        assertThat(inboxRows("broken-1")).isZero();
    }

    @Test
    void refusesAResourceThatIsNotAnObservation() throws Exception {
        String patient = "{\"resourceType\":\"Patient\",\"id\":\"p9\"}";
        HttpResponse<String> response = put("/fhir-hook/Observation/p9", "test-hook-token", patient);
        assertThat(response.statusCode()).isEqualTo(400);
        assertThat(quarantine.forResource("Patient", "p9"))
                .singleElement()
                .satisfies(q -> assertThat(q.reasonCode()).isEqualTo("unsupported-resource-type"));
    }

    @Test
    void refusesABodyWhoseIdDiffersFromThePath() throws Exception {
        HttpResponse<String> response = put("/fhir-hook/Observation/other-id", "test-hook-token", OBSERVATION);
        assertThat(response.statusCode()).isEqualTo(400);
        assertThat(response.body()).contains("the body's id is abg-1");
    }

    @Test
    void refusesAnOversizedBodyWith413BeforeReadingIt() throws Exception {
        String huge =
                OBSERVATION.replace("\"status\"", "\"note\":[{\"text\":\"" + "x".repeat(30_000) + "\"}],\"status\"");
        HttpResponse<String> response = put("/fhir-hook/Observation/abg-413", "test-hook-token", huge);
        assertThat(response.statusCode()).isEqualTo(413);
        assertThat(inboxRows("abg-413")).isZero();
    }

    @Test
    void acknowledgesAnEmptyPing() throws Exception {
        HttpRequest ping = HttpRequest.newBuilder(URI.create("http://127.0.0.1:" + port + "/fhir-hook"))
                .header("Authorization", "Bearer test-hook-token")
                .POST(HttpRequest.BodyPublishers.noBody())
                .build();
        assertThat(http.send(ping, HttpResponse.BodyHandlers.ofString()).statusCode())
                .isEqualTo(200);
    }

    private HttpResponse<String> send(String method, String path, String token) throws Exception {
        HttpRequest.Builder b = HttpRequest.newBuilder(URI.create("http://127.0.0.1:" + port + path))
                .method(method, HttpRequest.BodyPublishers.noBody());
        if (token != null) {
            b.header("Authorization", "Bearer " + token);
        }
        return http.send(b.build(), HttpResponse.BodyHandlers.ofString());
    }

    /**
     * The container drops {@code ;} path parameters when it maps a request to a servlet, so these paths reach the
     * hook. The token check is mapped to the hook servlet, not to a path test, so it refuses them without the token;
     * with it the hook refuses them itself, as Spring Security's firewall does on every other path.
     */
    @Test
    void aPathParameterNeitherGetsPastTheTokenCheckNorIsRecorded() throws Exception {
        String body = OBSERVATION.replace("abg-1", "abg-semi");
        for (String path : List.of(
                "/fhir-hook;x=1/Observation/abg-semi",
                "/fhir-hook/Observation;x=1/abg-semi",
                "/fhir-hook/Observation/abg-semi;jsessionid=1")) {
            assertThat(put(path, null, body).statusCode()).as(path).isEqualTo(401);
            HttpResponse<String> withToken = put(path, "test-hook-token", body);
            assertThat(withToken.statusCode()).as(path).isEqualTo(400);
            assertThat(withToken.body()).contains("OperationOutcome").contains("';'");
        }
        assertThat(inboxRows("abg-semi")).isZero();
    }

    @Test
    void answersOnlyWhatItServesWithAStatusAndAnOperationOutcome() throws Exception {
        HttpResponse<String> get = send("GET", "/fhir-hook/Observation/abg-1", "test-hook-token");
        assertThat(get.statusCode()).isEqualTo(405);
        assertThat(get.headers().firstValue("Allow")).hasValue("PUT, DELETE");
        HttpResponse<String> getRoot = send("GET", "/fhir-hook", "test-hook-token");
        assertThat(getRoot.statusCode()).isEqualTo(405);
        assertThat(getRoot.headers().firstValue("Allow")).hasValue("POST");
        for (String path : List.of("/fhir-hook/Patient/p1", "/fhir-hook/Observation/a/b", "/fhir-hook/x")) {
            HttpResponse<String> other = put(path, "test-hook-token", OBSERVATION);
            assertThat(other.statusCode()).as(path).isEqualTo(404);
            assertThat(other.body()).as(path).contains("OperationOutcome").contains("PUT and DELETE");
        }
        HttpResponse<String> badDelete = send("DELETE", "/fhir-hook/Observation/" + "x".repeat(65), "test-hook-token");
        assertThat(badDelete.statusCode()).isEqualTo(400);
        assertThat(badDelete.body()).contains("not a valid FHIR id");
        assertThat(send("DELETE", "/fhir-hook/Observation/abg-del", null).statusCode())
                .isEqualTo(401);
        assertThat(inboxRows("abg-del")).isZero();
        assertThat(send("DELETE", "/fhir-hook/Observation/abg-del", "test-hook-token")
                        .statusCode())
                .isEqualTo(200);
        assertThat(inboxRows("abg-del")).isOne();
    }

    /**
     * The hook is outside Spring Security's chain (its cost is why): its answers carry none of the chain's headers,
     * which every other response carries.
     */
    @Test
    void theHookIsServedOutsideTheSecurityChain() throws Exception {
        HttpResponse<String> hook = send("POST", "/fhir-hook", "test-hook-token");
        assertThat(hook.statusCode()).isEqualTo(200);
        assertThat(hook.headers().firstValue("X-Frame-Options")).isEmpty();
        assertThat(hook.headers().firstValue("X-Content-Type-Options")).hasValue("nosniff");
        assertThat(send("GET", "/login", null).headers().firstValue("X-Frame-Options"))
                .hasValue("DENY");
    }

    /** A path that leaves the hook after normalization is the security chain's: the hook token is no login. */
    @Test
    void aPathThatLeavesTheHookMeetsTheSecurityChain() throws Exception {
        for (String path : List.of("/fhir-hook/../api/v1/rules", "/fhir-hook/%2e%2e/api/v1/rules")) {
            HttpResponse<String> response = send("GET", path, "test-hook-token");
            assertThat(response.statusCode()).as(path).isIn(400, 401);
            assertThat(response.body()).as(path).doesNotContain("hypoxemia");
        }
    }
}
