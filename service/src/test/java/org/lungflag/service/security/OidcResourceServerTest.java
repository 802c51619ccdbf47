package org.lungflag.service.security;

import static org.assertj.core.api.Assertions.assertThat;

import com.nimbusds.jose.JOSEObjectType;
import com.nimbusds.jose.JWSAlgorithm;
import com.nimbusds.jose.JWSHeader;
import com.nimbusds.jose.crypto.RSASSASigner;
import com.nimbusds.jose.jwk.JWKSet;
import com.nimbusds.jose.jwk.RSAKey;
import com.nimbusds.jose.jwk.gen.RSAKeyGenerator;
import com.nimbusds.jwt.JWTClaimsSet;
import com.nimbusds.jwt.SignedJWT;
import com.sun.net.httpserver.HttpServer;
import java.net.InetSocketAddress;
import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.util.Date;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.Test;
import org.springframework.boot.test.context.SpringBootTest;
import org.springframework.boot.test.web.server.LocalServerPort;
import org.springframework.test.context.ActiveProfiles;
import org.springframework.test.context.DynamicPropertyRegistry;
import org.springframework.test.context.DynamicPropertySource;
import org.springframework.test.context.TestPropertySource;

/**
 * The production mode: an OAuth 2.0 resource server (RFC 6750 bearer tokens, JWT per RFC 7519 signed RS256 by a key
 * from a JWK Set, RFC 7517, served here by a local endpoint). Roles come from a nested claim; a token from another
 * key, an expired one, one for another audience and one without a Lungflag role are refused.
 */
@SpringBootTest(webEnvironment = SpringBootTest.WebEnvironment.RANDOM_PORT)
@ActiveProfiles("test")
@TestPropertySource(
        properties = {
            "lungflag.fhir.base-url=http://127.0.0.1:9/fhir",
            "lungflag.evaluation.processor-enabled=false",
            "lungflag.security.mode=oidc",
            "lungflag.security.oidc.audience=lungflag",
            "lungflag.security.oidc.roles-claim=realm_access.roles"
        })
class OidcResourceServerTest {

    static final RSAKey KEY = generate("site-key");
    static final RSAKey OTHER = generate("someone-else");
    static final HttpServer JWKS = jwks();

    @LocalServerPort
    int port;

    static RSAKey generate(String id) {
        try {
            return new RSAKeyGenerator(2048).keyID(id).generate();
        } catch (Exception e) {
            throw new IllegalStateException(e);
        }
    }

    static HttpServer jwks() {
        try {
            HttpServer server = HttpServer.create(new InetSocketAddress("127.0.0.1", 0), 0);
            byte[] body = new JWKSet(KEY.toPublicJWK()).toString().getBytes(StandardCharsets.UTF_8);
            server.createContext("/jwks", exchange -> {
                exchange.getResponseHeaders().set("Content-Type", "application/json");
                exchange.sendResponseHeaders(200, body.length);
                exchange.getResponseBody().write(body);
                exchange.close();
            });
            server.start();
            return server;
        } catch (Exception e) {
            throw new IllegalStateException(e);
        }
    }

    @DynamicPropertySource
    static void keys(DynamicPropertyRegistry registry) {
        registry.add(
                "lungflag.security.oidc.jwk-set-uri",
                () -> "http://127.0.0.1:" + JWKS.getAddress().getPort() + "/jwks");
    }

    @AfterAll
    static void stop() {
        JWKS.stop(0);
    }

    static String token(RSAKey key, List<String> roles, String audience, Instant expires) throws Exception {
        JWTClaimsSet claims = new JWTClaimsSet.Builder()
                .subject("quality-lead-7")
                .issuer("https://idp.saltmarsh.example")
                .audience(audience)
                .issueTime(new Date())
                .expirationTime(Date.from(expires))
                .claim("realm_access", Map.of("roles", roles))
                .build();
        SignedJWT jwt = new SignedJWT(
                new JWSHeader.Builder(JWSAlgorithm.RS256)
                        .keyID(key.getKeyID())
                        .type(JOSEObjectType.JWT)
                        .build(),
                claims);
        jwt.sign(new RSASSASigner(key));
        return jwt.serialize();
    }

    private HttpResponse<String> call(String method, String path, String token) throws Exception {
        HttpRequest.Builder b = HttpRequest.newBuilder(URI.create("http://127.0.0.1:" + port + path));
        if (token != null) {
            b.header("Authorization", "Bearer " + token);
        }
        if (method.equals("PUT")) {
            b.header("Content-Type", "application/json")
                    .PUT(HttpRequest.BodyPublishers.ofString("{\"mode\":\"silent\",\"reason\":\"oidc test\"}"));
        }
        return HttpClient.newHttpClient().send(b.build(), HttpResponse.BodyHandlers.ofString());
    }

    private static Instant inAnHour() {
        return Instant.now().plusSeconds(3600);
    }

    @Test
    void anAuditorTokenReadsButCannotSwitchARule() throws Exception {
        String auditor = token(KEY, List.of("lungflag-auditor", "offline_access"), "lungflag", inAnHour());
        assertThat(call("GET", "/api/v1/rules", auditor).statusCode()).isEqualTo(200);
        assertThat(call("GET", "/console/rules", auditor).statusCode()).isEqualTo(200);
        assertThat(call("PUT", "/api/v1/rules/hypoxemia/mode", auditor).statusCode())
                .isEqualTo(403);
    }

    @Test
    void anAdminTokenSwitchesARule() throws Exception {
        String admin = token(KEY, List.of("lungflag-admin"), "lungflag", inAnHour());
        HttpResponse<String> r = call("PUT", "/api/v1/rules/hypoxemia/mode", admin);
        assertThat(r.statusCode()).as(r.body()).isEqualTo(200);
        assertThat(call("GET", "/api/v1/rules/hypoxemia/mode-changes", admin).body())
                .contains("quality-lead-7");
        call("PUT", "/api/v1/rules/hypoxemia/mode", admin);
    }

    @Test
    void badTokensAndNoTokenAreRefusedWith401AndNoLoginPageIsOffered() throws Exception {
        assertThat(call("GET", "/api/v1/rules", null).statusCode()).isEqualTo(401);
        HttpResponse<String> console = call("GET", "/console", null);
        assertThat(console.statusCode()).isEqualTo(401);
        assertThat(console.headers().firstValue("WWW-Authenticate"))
                .hasValueSatisfying(v -> assertThat(v).startsWith("Bearer"));
        assertThat(call("GET", "/api/v1/rules", token(OTHER, List.of("lungflag-admin"), "lungflag", inAnHour()))
                        .statusCode())
                .as("signed by a key not in the JWK Set")
                .isEqualTo(401);
        assertThat(call(
                                "GET",
                                "/api/v1/rules",
                                token(
                                        KEY,
                                        List.of("lungflag-admin"),
                                        "lungflag",
                                        Instant.now().minusSeconds(600)))
                        .statusCode())
                .as("expired")
                .isEqualTo(401);
        assertThat(call("GET", "/api/v1/rules", token(KEY, List.of("lungflag-admin"), "another-app", inAnHour()))
                        .statusCode())
                .as("another audience")
                .isEqualTo(401);
        assertThat(call("GET", "/api/v1/rules", token(KEY, List.of("nurse"), "lungflag", inAnHour()))
                        .statusCode())
                .as("no Lungflag role")
                .isEqualTo(403);
        assertThat(call("GET", "/api/v1/rules", "not.a.jwt").statusCode()).isEqualTo(401);
    }
}
