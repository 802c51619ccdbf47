package org.lungflag.service.e2e;

import com.sun.net.httpserver.HttpExchange;
import com.sun.net.httpserver.HttpServer;
import java.io.IOException;
import java.io.InputStream;
import java.net.InetAddress;
import java.net.InetSocketAddress;
import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.time.Duration;
import java.util.List;
import java.util.Set;
import java.util.concurrent.Executors;
import java.util.concurrent.atomic.AtomicInteger;
import java.util.concurrent.atomic.AtomicIntegerArray;

/**
 * A minimal load balancer for tests, on the loopback address: each request goes to the next instance in turn, with
 * its method, path, body and the headers a rest-hook carries; no session affinity. Counts what each instance got.
 */
final class RoundRobinProxy implements AutoCloseable {

    private static final Set<String> FORWARDED = Set.of("authorization", "content-type", "accept");

    private final HttpServer server;
    private final HttpClient client =
            HttpClient.newBuilder().connectTimeout(Duration.ofSeconds(5)).build();
    private final AtomicInteger next = new AtomicInteger();
    private volatile List<Integer> targets = List.of();
    private final AtomicIntegerArray served = new AtomicIntegerArray(8);

    RoundRobinProxy() throws IOException {
        server = HttpServer.create(new InetSocketAddress(InetAddress.getLoopbackAddress(), 0), 50);
        server.setExecutor(Executors.newFixedThreadPool(4, r -> {
            Thread t = new Thread(r, "test-load-balancer");
            t.setDaemon(true);
            return t;
        }));
        server.createContext("/", this::forward);
        server.start();
    }

    int port() {
        return server.getAddress().getPort();
    }

    String url() {
        return "http://127.0.0.1:" + port();
    }

    void targets(List<Integer> ports) {
        this.targets = List.copyOf(ports);
    }

    /** Requests forwarded to the i-th target. */
    int served(int i) {
        return served.get(i);
    }

    private void forward(HttpExchange exchange) throws IOException {
        try (exchange) {
            List<Integer> ports = targets;
            if (ports.isEmpty()) {
                exchange.sendResponseHeaders(503, -1);
                return;
            }
            int i = Math.floorMod(next.getAndIncrement(), ports.size());
            byte[] body;
            try (InputStream in = exchange.getRequestBody()) {
                body = in.readAllBytes();
            }
            HttpRequest.Builder request = HttpRequest.newBuilder(
                            URI.create("http://127.0.0.1:" + ports.get(i) + exchange.getRequestURI()))
                    .timeout(Duration.ofSeconds(30))
                    .method(exchange.getRequestMethod(), HttpRequest.BodyPublishers.ofByteArray(body));
            exchange.getRequestHeaders().forEach((name, values) -> {
                if (FORWARDED.contains(name.toLowerCase())) {
                    values.forEach(v -> request.header(name, v));
                }
            });
            HttpResponse<byte[]> response;
            try {
                response = client.send(request.build(), HttpResponse.BodyHandlers.ofByteArray());
            } catch (InterruptedException e) {
                Thread.currentThread().interrupt();
                exchange.sendResponseHeaders(502, -1);
                return;
            } catch (IOException e) {
                exchange.sendResponseHeaders(502, -1);
                return;
            }
            served.incrementAndGet(i);
            response.headers()
                    .firstValue("Content-Type")
                    .ifPresent(v -> exchange.getResponseHeaders().add("Content-Type", v));
            byte[] out = response.body();
            exchange.sendResponseHeaders(response.statusCode(), out.length == 0 ? -1 : out.length);
            if (out.length > 0) {
                exchange.getResponseBody().write(out);
            }
        }
    }

    @Override
    public void close() {
        server.stop(0);
    }
}
