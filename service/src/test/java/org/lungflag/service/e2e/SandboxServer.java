package org.lungflag.service.e2e;

import java.io.IOException;
import java.io.UncheckedIOException;
import java.net.ServerSocket;
import org.lungflag.sandbox.fhirserver.SandboxFhirServer;
import org.springframework.test.context.DynamicPropertyRegistry;

/**
 * Points a service test context at the one embedded HAPI JPA server of this test JVM, and gives the service a fixed
 * port so the Subscriptions it registers can reach it.
 */
public final class SandboxServer {

    private SandboxServer() {}

    public static SandboxFhirServer server() {
        return SandboxFhirServer.shared();
    }

    public static void register(DynamicPropertyRegistry registry) {
        int port = freePort();
        registry.add("lungflag.fhir.base-url", () -> server().baseUrl());
        registry.add("server.port", () -> port);
        registry.add("lungflag.intake.public-url", () -> "http://127.0.0.1:" + port);
    }

    public static int freePort() {
        try (ServerSocket socket = new ServerSocket(0)) {
            return socket.getLocalPort();
        } catch (IOException e) {
            throw new UncheckedIOException(e);
        }
    }
}
