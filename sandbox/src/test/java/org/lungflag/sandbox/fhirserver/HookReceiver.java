package org.lungflag.sandbox.fhirserver;

import com.sun.net.httpserver.HttpServer;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.net.InetAddress;
import java.net.InetSocketAddress;
import java.nio.charset.StandardCharsets;
import java.util.HashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.concurrent.CopyOnWriteArrayList;

/**
 * A tiny rest-hook endpoint on a random loopback port that records every request it gets and answers 204, as a
 * subscriber that acknowledges fast should.
 */
final class HookReceiver implements AutoCloseable {

    /** One request as it arrived. Header names are lower-cased. */
    record Delivery(String method, String path, Map<String, List<String>> headers, String body, long receivedAtNanos) {

        String header(String name) {
            List<String> values = headers.get(name.toLowerCase(Locale.ROOT));
            return values == null || values.isEmpty() ? null : values.get(0);
        }
    }

    private final HttpServer server;
    private final List<Delivery> deliveries = new CopyOnWriteArrayList<>();

    private HookReceiver(HttpServer server) {
        this.server = server;
    }

    static HookReceiver start() {
        HttpServer server;
        try {
            server = HttpServer.create(new InetSocketAddress(InetAddress.getLoopbackAddress(), 0), 0);
        } catch (IOException e) {
            throw new UncheckedIOException("Cannot open the test rest-hook receiver", e);
        }
        HookReceiver receiver = new HookReceiver(server);
        server.createContext("/", exchange -> {
            long receivedAt = System.nanoTime();
            String body = new String(exchange.getRequestBody().readAllBytes(), StandardCharsets.UTF_8);
            Map<String, List<String>> headers = new HashMap<>();
            exchange.getRequestHeaders()
                    .forEach((name, values) -> headers.put(name.toLowerCase(Locale.ROOT), List.copyOf(values)));
            receiver.deliveries.add(new Delivery(
                    exchange.getRequestMethod(),
                    exchange.getRequestURI().getPath(),
                    Map.copyOf(headers),
                    body,
                    receivedAt));
            exchange.sendResponseHeaders(204, -1);
            exchange.close();
        });
        server.start();
        return receiver;
    }

    /** The endpoint to put in {@code Subscription.channel.endpoint}. */
    String endpoint() {
        return "http://127.0.0.1:" + server.getAddress().getPort() + "/hook";
    }

    List<Delivery> deliveries() {
        return List.copyOf(deliveries);
    }

    @Override
    public void close() {
        server.stop(0);
    }
}
