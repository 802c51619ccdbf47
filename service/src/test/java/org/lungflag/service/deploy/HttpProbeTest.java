package org.lungflag.service.deploy;

import static org.assertj.core.api.Assertions.assertThat;

import com.sun.net.httpserver.HttpServer;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.PrintStream;
import java.net.InetAddress;
import java.net.InetSocketAddress;
import java.net.ServerSocket;
import java.nio.charset.StandardCharsets;
import org.junit.jupiter.api.AfterEach;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.Test;

/** The probe the container health checks run: its exit code is the container's health. */
class HttpProbeTest {

    private HttpServer server;
    private final ByteArrayOutputStream printed = new ByteArrayOutputStream();
    private final PrintStream out = new PrintStream(printed, true, StandardCharsets.UTF_8);

    @BeforeEach
    void start() throws IOException {
        server = HttpServer.create(new InetSocketAddress(InetAddress.getLoopbackAddress(), 0), 0);
        server.createContext("/up", exchange -> {
            byte[] body = "{\"status\":\"UP\"}".getBytes(StandardCharsets.UTF_8);
            exchange.sendResponseHeaders(200, body.length);
            exchange.getResponseBody().write(body);
            exchange.close();
        });
        server.createContext("/down", exchange -> {
            exchange.sendResponseHeaders(503, -1);
            exchange.close();
        });
        server.start();
    }

    @AfterEach
    void stop() {
        server.stop(0);
    }

    private String url(String path) {
        return "http://127.0.0.1:" + server.getAddress().getPort() + path;
    }

    @Test
    void aTwoHundredAnswerIsHealthy() {
        assertThat(HttpProbe.check(out, url("/up"))).isEqualTo(HttpProbe.HEALTHY);
        assertThat(printed.toString(StandardCharsets.UTF_8))
                .contains("answered 200")
                .doesNotContain("UP");
    }

    @Test
    void aServiceUnavailableAnswerIsUnhealthy() {
        assertThat(HttpProbe.check(out, url("/down"), "2")).isEqualTo(HttpProbe.UNHEALTHY);
        assertThat(printed.toString(StandardCharsets.UTF_8)).contains("answered 503");
    }

    @Test
    void nothingListeningIsUnhealthy() throws IOException {
        int port;
        try (ServerSocket s = new ServerSocket(0)) {
            port = s.getLocalPort();
        }
        assertThat(HttpProbe.check(out, "http://127.0.0.1:" + port + "/", "2")).isEqualTo(HttpProbe.UNHEALTHY);
        assertThat(printed.toString(StandardCharsets.UTF_8)).contains("did not answer");
    }

    @Test
    void badArgumentsAreAUsageErrorNotAHealthVerdict() {
        assertThat(HttpProbe.check(out)).isEqualTo(HttpProbe.USAGE);
        assertThat(HttpProbe.check(out, "ftp://example.invalid/")).isEqualTo(HttpProbe.USAGE);
        assertThat(HttpProbe.check(out, url("/up"), "0")).isEqualTo(HttpProbe.USAGE);
        assertThat(printed.toString(StandardCharsets.UTF_8)).contains("usage: HttpProbe URL");
    }
}
