package org.lungflag.service.security;

import static org.assertj.core.api.Assertions.assertThat;

import java.io.ByteArrayInputStream;
import java.net.CookieManager;
import java.net.URI;
import java.net.URLEncoder;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.nio.charset.StandardCharsets;
import java.time.Duration;
import java.util.List;
import java.util.Map;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import java.util.stream.Collectors;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.Test;
import org.lungflag.service.testsupport.TestAccounts;
import org.springframework.beans.factory.annotation.Autowired;
import org.springframework.boot.autoconfigure.web.ServerProperties;
import org.springframework.boot.test.autoconfigure.actuate.observability.AutoConfigureObservability;
import org.springframework.boot.test.context.SpringBootTest;
import org.springframework.boot.test.web.server.LocalServerPort;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.test.context.ActiveProfiles;
import org.springframework.test.context.TestPropertySource;

/**
 * Who may do what, and that a refused request changes nothing: every API endpoint and console page without
 * credentials, with a wrong password, with the wrong role; the rest-hook with a wrong token; oversized bodies;
 * forms without their CSRF token. Statuses per RFC 9110 (401 with a challenge, 403, 413) and Spring Security's
 * documented behaviour (login redirect for pages, CSRF on unsafe methods).
 */
@SpringBootTest(webEnvironment = SpringBootTest.WebEnvironment.RANDOM_PORT)
@ActiveProfiles("test")
@AutoConfigureObservability(tracing = false)
@TestPropertySource(
        properties = {
            "lungflag.fhir.base-url=http://127.0.0.1:9/fhir",
            "lungflag.intake.max-body-bytes=20000",
            "lungflag.security.max-api-body-bytes=20000",
            "lungflag.evaluation.processor-enabled=false"
        })
class SecurityBoundariesTest {

    static final List<String> API_GETS = List.of(
            "/api/v1/advisories",
            "/api/v1/advisories/some-key",
            "/api/v1/advisories?format=csv",
            "/api/v1/evaluations",
            "/api/v1/evaluations/1",
            "/api/v1/quarantine",
            "/api/v1/rules",
            "/api/v1/rules/hypoxemia",
            "/api/v1/rules/hypoxemia/mode-changes",
            "/api/v1/indices",
            "/api/v1/statistics",
            "/api/v1/statistics/firings",
            "/api/v1/statistics/rules",
            "/api/v1/overview",
            "/api/v1/patients/p1/timeline",
            "/v3/api-docs",
            "/actuator/prometheus");

    static final List<String> CONSOLE_GETS = List.of(
            "/",
            "/console",
            "/console/advisories",
            "/console/advisories/some-key",
            "/console/evaluations/1",
            "/console/patients/p1",
            "/console/rules",
            "/console/rules/hypoxemia",
            "/console/quarantine");

    static final String MODE_BODY = "{\"mode\":\"silent\",\"reason\":\"x\"}";

    @LocalServerPort
    int port;

    @Autowired
    JdbcClient jdbc;

    @Autowired
    ServerProperties server;

    private final HttpClient http = HttpClient.newHttpClient();

    @BeforeEach
    void noSwitches() {
        jdbc.sql("DELETE FROM rule_mode").update();
        jdbc.sql("DELETE FROM rule_mode_change").update();
    }

    private URI uri(String path) {
        return URI.create("http://127.0.0.1:" + port + path);
    }

    private HttpResponse<String> send(HttpRequest r) throws Exception {
        return http.send(r, HttpResponse.BodyHandlers.ofString());
    }

    private HttpResponse<String> get(String path, String authorization) throws Exception {
        HttpRequest.Builder b = HttpRequest.newBuilder(uri(path)).GET();
        if (authorization != null) {
            b.header("Authorization", authorization);
        }
        return send(b.build());
    }

    private HttpResponse<String> putMode(String authorization, String body) throws Exception {
        HttpRequest.Builder b = HttpRequest.newBuilder(uri("/api/v1/rules/hypoxemia/mode"))
                .header("Content-Type", "application/json")
                .PUT(HttpRequest.BodyPublishers.ofString(body));
        if (authorization != null) {
            b.header("Authorization", authorization);
        }
        return send(b.build());
    }

    private long switches() {
        return jdbc.sql("SELECT COUNT(*) FROM rule_mode").query(Long.class).single()
                + jdbc.sql("SELECT COUNT(*) FROM rule_mode_change")
                        .query(Long.class)
                        .single();
    }

    private long inbox() {
        return jdbc.sql("SELECT COUNT(*) FROM intake_inbox").query(Long.class).single();
    }

    @Test
    void everyApiEndpointRefusesARequestWithoutCredentialsWith401AndAChallenge() throws Exception {
        for (String path : API_GETS) {
            HttpResponse<String> r = get(path, null);
            assertThat(r.statusCode()).as(path).isEqualTo(401);
            assertThat(r.headers().firstValue("WWW-Authenticate"))
                    .as(path)
                    .hasValueSatisfying(v -> assertThat(v).startsWith("Basic"));
            assertThat(r.body()).as(path).doesNotContain("hypoxemia-");
        }
        assertThat(putMode(null, MODE_BODY).statusCode()).isEqualTo(401);
        HttpResponse<String> dryRun = send(HttpRequest.newBuilder(uri("/api/v1/evaluate"))
                .header("Content-Type", "application/fhir+json")
                .POST(HttpRequest.BodyPublishers.ofString("{\"resourceType\":\"Bundle\",\"type\":\"collection\"}"))
                .build());
        assertThat(dryRun.statusCode()).isEqualTo(401);
        assertThat(switches()).isZero();
    }

    @Test
    void aWrongPasswordIsRefusedWith401() throws Exception {
        String wrong = TestAccounts.basic(TestAccounts.ADMIN, "not-the-password");
        for (String path : API_GETS) {
            assertThat(get(path, wrong).statusCode()).as(path).isEqualTo(401);
        }
        assertThat(putMode(wrong, MODE_BODY).statusCode()).isEqualTo(401);
        assertThat(get("/api/v1/rules", TestAccounts.basic("nobody", "x")).statusCode())
                .isEqualTo(401);
        assertThat(switches()).isZero();
    }

    @Test
    void everyConsolePageSendsAVisitorWithoutASessionToTheLoginPage() throws Exception {
        for (String path : CONSOLE_GETS) {
            HttpResponse<String> r = get(path, null);
            assertThat(r.statusCode()).as(path).isEqualTo(302);
            assertThat(r.headers().firstValue("Location"))
                    .as(path)
                    .hasValueSatisfying(v -> assertThat(v).endsWith("/login"));
        }
        HttpResponse<String> post = send(HttpRequest.newBuilder(uri("/console/rules/hypoxemia/mode"))
                .header("Content-Type", "application/x-www-form-urlencoded")
                .POST(HttpRequest.BodyPublishers.ofString("mode=SILENT"))
                .build());
        assertThat(post.statusCode()).isIn(302, 403);
        assertThat(switches()).isZero();
        assertThat(get("/login", null).statusCode()).isEqualTo(200);
        assertThat(get("/console/assets/console.css", null).statusCode()).isEqualTo(200);
    }

    @Test
    void anAuditorReadsEverythingButCannotSwitchARuleNorReadTheMetrics() throws Exception {
        for (String path : API_GETS) {
            HttpResponse<String> r = get(path, TestAccounts.auditor());
            if (path.equals("/actuator/prometheus")) {
                assertThat(r.statusCode()).as(path).isEqualTo(403);
            } else if (path.contains("some-key") || path.endsWith("/evaluations/1")) {
                assertThat(r.statusCode()).as(path).isEqualTo(404);
            } else {
                assertThat(r.statusCode()).as(path).isEqualTo(200);
            }
        }
        for (String path : CONSOLE_GETS) {
            HttpResponse<String> r = get(path, TestAccounts.auditor());
            assertThat(r.statusCode()).as(path).isIn(200, 404);
        }
        HttpResponse<String> refused = putMode(TestAccounts.auditor(), MODE_BODY);
        assertThat(refused.statusCode()).isEqualTo(403);
        assertThat(refused.body()).contains("admin");
        assertThat(switches()).isZero();
    }

    @Test
    void anAdminSwitchesARuleAndBadModesAreRefusedWith400() throws Exception {
        assertThat(putMode(TestAccounts.admin(), "{\"mode\":\"loud\"}").statusCode())
                .isEqualTo(400);
        assertThat(switches()).isZero();
        HttpResponse<String> ok = putMode(TestAccounts.admin(), MODE_BODY);
        assertThat(ok.statusCode()).as(ok.body()).isEqualTo(200);
        assertThat(jdbc.sql("SELECT mode FROM rule_mode WHERE rule_id = 'hypoxemia'")
                        .query(String.class)
                        .single())
                .isEqualTo("SILENT");
        assertThat(get("/actuator/prometheus", TestAccounts.admin()).statusCode())
                .isEqualTo(200);
    }

    @Test
    void theRestHookRefusesAWrongTokenAndConsoleCredentialsAndRecordsNothing() throws Exception {
        String body = "{\"resourceType\":\"Observation\",\"id\":\"neg-1\",\"meta\":{\"versionId\":\"1\"},"
                + "\"status\":\"final\",\"code\":{\"coding\":[{\"system\":\"http://loinc.org\",\"code\":\"2703-7\"}]}}";
        for (String authorization :
                new String[] {null, "Bearer wrong-token", "Bearer test-hook-tokeN", TestAccounts.admin()}) {
            HttpRequest.Builder b = HttpRequest.newBuilder(uri("/fhir-hook/Observation/neg-1"))
                    .header("Content-Type", "application/fhir+json")
                    .PUT(HttpRequest.BodyPublishers.ofString(body));
            if (authorization != null) {
                b.header("Authorization", authorization);
            }
            assertThat(send(b.build()).statusCode())
                    .as(String.valueOf(authorization))
                    .isEqualTo(401);
            HttpRequest.Builder ping = HttpRequest.newBuilder(uri("/fhir-hook"))
                    .header("Content-Type", "application/fhir+json")
                    .POST(HttpRequest.BodyPublishers.ofString(""));
            if (authorization != null) {
                ping.header("Authorization", authorization);
            }
            assertThat(send(ping.build()).statusCode()).isEqualTo(401);
        }
        assertThat(inbox()).isZero();
    }

    @Test
    void oversizedBodiesAreRefusedWith413BeforeAnythingIsProcessedAndUnauthenticatedOnesWith401() throws Exception {
        String big = "{\"resourceType\":\"Bundle\",\"type\":\"collection\",\"entry\":[],\"x\":\"" + "a".repeat(30_000)
                + "\"}";
        HttpResponse<String> declared = send(HttpRequest.newBuilder(uri("/api/v1/evaluate"))
                .header("Content-Type", "application/fhir+json")
                .header("Authorization", TestAccounts.auditor())
                .POST(HttpRequest.BodyPublishers.ofString(big))
                .build());
        assertThat(declared.statusCode()).isEqualTo(413);
        HttpResponse<String> chunked = send(HttpRequest.newBuilder(uri("/api/v1/evaluate"))
                .header("Content-Type", "application/fhir+json")
                .header("Authorization", TestAccounts.auditor())
                .POST(HttpRequest.BodyPublishers.ofInputStream(
                        () -> new ByteArrayInputStream(big.getBytes(StandardCharsets.UTF_8))))
                .build());
        assertThat(chunked.statusCode()).isEqualTo(413);
        HttpResponse<String> anonymous = send(HttpRequest.newBuilder(uri("/api/v1/evaluate"))
                .header("Content-Type", "application/fhir+json")
                .POST(HttpRequest.BodyPublishers.ofString(big))
                .build());
        assertThat(anonymous.statusCode()).isEqualTo(401);
        String bigMode = "{\"mode\":\"silent\",\"reason\":\"" + "r".repeat(30_000) + "\"}";
        assertThat(putMode(TestAccounts.admin(), bigMode).statusCode()).isEqualTo(413);
        assertThat(switches()).isZero();
        HttpResponse<String> hook = send(HttpRequest.newBuilder(uri("/fhir-hook/Observation/big-1"))
                .header("Content-Type", "application/fhir+json")
                .header("Authorization", "Bearer test-hook-token")
                .PUT(HttpRequest.BodyPublishers.ofString(big.replace("Bundle", "Observation")))
                .build());
        assertThat(hook.statusCode()).isEqualTo(413);
        assertThat(inbox()).isZero();
    }

    @Test
    void probesReachHealthWithoutALoginButSeeNoDetails() throws Exception {
        assertThat(get("/actuator/health/readiness", null).statusCode()).isEqualTo(200);
        assertThat(get("/actuator/health/liveness", null).statusCode()).isEqualTo(200);
        HttpResponse<String> anonymous = get("/actuator/health", null);
        assertThat(anonymous.body())
                .contains("\"status\"")
                .doesNotContain("components")
                .doesNotContain("127.0.0.1");
        assertThat(get("/actuator/health", TestAccounts.auditor()).body()).contains("\"components\"");
        assertThat(get("/actuator/env", TestAccounts.admin()).statusCode()).isIn(403, 404);
    }

    @Test
    void pagesCarrySecurityHeadersAndSessionsEndAfterThirtyMinutes() throws Exception {
        HttpResponse<String> login = get("/login", null);
        Map<String, List<String>> h = login.headers().map();
        assertThat(login.headers().firstValue("Content-Security-Policy"))
                .hasValueSatisfying(
                        v -> assertThat(v).contains("default-src 'self'").contains("frame-ancestors 'none'"));
        assertThat(login.headers().firstValue("X-Content-Type-Options")).hasValue("nosniff");
        assertThat(login.headers().firstValue("X-Frame-Options")).hasValue("DENY");
        assertThat(login.headers().firstValue("Referrer-Policy")).hasValue("same-origin");
        assertThat(h).containsKey("cache-control");
        assertThat(server.getServlet().getSession().getTimeout()).isEqualTo(Duration.ofMinutes(30));
    }

    /** A browser-like client: cookies kept, the CSRF token read from the page's form. */
    private final class Browser {
        final HttpClient client = HttpClient.newBuilder()
                .cookieHandler(new CookieManager())
                .followRedirects(HttpClient.Redirect.NEVER)
                .build();

        HttpResponse<String> get(String path) throws Exception {
            return client.send(HttpRequest.newBuilder(uri(path)).GET().build(), HttpResponse.BodyHandlers.ofString());
        }

        HttpResponse<String> post(String path, Map<String, String> form) throws Exception {
            String body = form.entrySet().stream()
                    .map(e -> URLEncoder.encode(e.getKey(), StandardCharsets.UTF_8) + "="
                            + URLEncoder.encode(e.getValue(), StandardCharsets.UTF_8))
                    .collect(Collectors.joining("&"));
            return client.send(
                    HttpRequest.newBuilder(uri(path))
                            .header("Content-Type", "application/x-www-form-urlencoded")
                            .POST(HttpRequest.BodyPublishers.ofString(body))
                            .build(),
                    HttpResponse.BodyHandlers.ofString());
        }

        String csrf(String html) {
            Matcher m = Pattern.compile("name=\"_csrf\" value=\"([^\"]+)\"").matcher(html);
            assertThat(m.find()).as("a CSRF field in the page").isTrue();
            return m.group(1);
        }

        void signIn(String user, String password) throws Exception {
            String token = csrf(get("/login").body());
            HttpResponse<String> r = post("/login", Map.of("username", user, "password", password, "_csrf", token));
            assertThat(r.statusCode()).isEqualTo(302);
            assertThat(r.headers().firstValue("Location").orElseThrow()).endsWith("/console");
        }
    }

    @Test
    void aLoginWithAWrongPasswordReturnsToTheLoginPageWithAnError() throws Exception {
        Browser b = new Browser();
        String token = b.csrf(b.get("/login").body());
        HttpResponse<String> r =
                b.post("/login", Map.of("username", TestAccounts.ADMIN, "password", "wrong", "_csrf", token));
        assertThat(r.statusCode()).isEqualTo(302);
        assertThat(r.headers().firstValue("Location").orElseThrow()).endsWith("/login?error");
        assertThat(b.get("/console").statusCode()).isEqualTo(302);
    }

    @Test
    void theConsoleSwitchFormNeedsItsCsrfTokenAndTheAdminRole() throws Exception {
        Browser admin = new Browser();
        admin.signIn(TestAccounts.ADMIN, TestAccounts.ADMIN_PASSWORD);
        HttpResponse<String> page = admin.get("/console/rules/hypoxemia");
        assertThat(page.statusCode()).isEqualTo(200);
        String token = admin.csrf(page.body());
        // without the token: refused, nothing changed
        assertThat(admin.post("/console/rules/hypoxemia/mode", Map.of("mode", "SILENT"))
                        .statusCode())
                .isEqualTo(403);
        assertThat(admin.post("/console/rules/hypoxemia/mode", Map.of("mode", "SILENT", "_csrf", "forged"))
                        .statusCode())
                .isEqualTo(403);
        assertThat(switches()).isZero();
        // with it: switched and recorded
        HttpResponse<String> ok =
                admin.post("/console/rules/hypoxemia/mode", Map.of("mode", "SILENT", "reason", "test", "_csrf", token));
        assertThat(ok.statusCode()).isEqualTo(302);
        assertThat(jdbc.sql("SELECT changed_by FROM rule_mode_change")
                        .query(String.class)
                        .single())
                .isEqualTo(TestAccounts.ADMIN);

        jdbc.sql("DELETE FROM rule_mode").update();
        jdbc.sql("DELETE FROM rule_mode_change").update();
        Browser auditor = new Browser();
        auditor.signIn(TestAccounts.AUDITOR, TestAccounts.AUDITOR_PASSWORD);
        HttpResponse<String> auditorPage = auditor.get("/console/rules/hypoxemia");
        assertThat(auditorPage.body()).doesNotContain("mode-form");
        String auditorToken = auditor.csrf(auditor.get("/login").body());
        assertThat(auditor.post("/console/rules/hypoxemia/mode", Map.of("mode", "SILENT", "_csrf", auditorToken))
                        .statusCode())
                .isEqualTo(403);
        assertThat(switches()).isZero();
        // signing out ends the session
        String logoutToken = auditor.csrf(auditor.get("/console").body());
        assertThat(auditor.post("/logout", Map.of("_csrf", logoutToken)).statusCode())
                .isIn(204, 302);
        assertThat(auditor.get("/console").statusCode()).isEqualTo(302);
    }
}
