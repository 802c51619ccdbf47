package org.lungflag.service.e2e;

import java.io.IOException;
import java.io.UncheckedIOException;
import java.net.ServerSocket;
import org.lungflag.sandbox.fhirserver.SandboxFhirServer;
import org.lungflag.sandbox.fhirserver.SandboxOptions;
import org.springframework.test.context.DynamicPropertyRegistry;

/**
 * Points a service test context at the one embedded HAPI JPA server of this test JVM, and gives the service a fixed
 * port so the Subscriptions it registers can reach it.
 *
 * <p>Every test class that starts a live service on this server carries {@code @DirtiesContext(classMode =
 * AFTER_CLASS)}: a service left running in Spring's context cache would keep catching up from the shared server and
 * write Flags under its own rule modes into the next class's patients.
 */
public final class SandboxServer {

    private SandboxServer() {}

    public static SandboxFhirServer server() {
        return SandboxFhirServer.shared();
    }

    public static void register(DynamicPropertyRegistry registry) {
        register(registry, server());
    }

    /**
     * A FHIR server of the calling class's own, for checks that count everything the service saw (statistics): on
     * the shared server, records other classes posted can still be matched to this class's Subscription while HAPI
     * works through its queue. Close it in the class's {@code @AfterAll}.
     */
    public static SandboxFhirServer startOwn() {
        return SandboxFhirServer.start(SandboxOptions.inMemory());
    }

    public static void register(DynamicPropertyRegistry registry, SandboxFhirServer server) {
        int port = freePort();
        registry.add("lungflag.fhir.base-url", server::baseUrl);
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
