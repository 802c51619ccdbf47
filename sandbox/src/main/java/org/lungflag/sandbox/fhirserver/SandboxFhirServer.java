package org.lungflag.sandbox.fhirserver;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.rest.server.RestfulServer;
import jakarta.servlet.ServletRegistration;
import java.io.IOException;
import java.net.Inet6Address;
import java.net.InetAddress;
import java.net.ServerSocket;
import java.time.Duration;
import java.util.Objects;
import java.util.concurrent.atomic.AtomicBoolean;
import javax.sql.DataSource;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;
import org.springframework.boot.web.embedded.tomcat.TomcatServletWebServerFactory;
import org.springframework.boot.web.server.PortInUseException;
import org.springframework.boot.web.server.WebServer;
import org.springframework.context.annotation.AnnotationConfigApplicationContext;

/**
 * A real FHIR R4 server for the demo and for end-to-end tests: HAPI's JPA server on H2 with rest-hook subscriptions,
 * in its own Spring context, behind an embedded Tomcat.
 *
 * <p>It searches, honours conditional create ({@code If-None-Exist}), runs transaction Bundles and delivers rest-hook
 * notifications like a production HAPI server; it has <b>no security</b>, so it listens on the loopback address
 * unless told otherwise.
 *
 * <pre>{@code
 * try (SandboxFhirServer server = SandboxFhirServer.start(SandboxOptions.inMemory())) {
 *     IGenericClient client = server.fhirContext().newRestfulGenericClient(server.baseUrl());
 *     ...
 * }
 * }</pre>
 *
 * Tests should use {@link #shared()}: starting takes about 25 s, so one test JVM starts one server.
 */
public final class SandboxFhirServer implements AutoCloseable {

    /** The servlet path under which the FHIR endpoint is served. */
    public static final String FHIR_PATH = "/fhir";

    private static final Logger log = LoggerFactory.getLogger(SandboxFhirServer.class);

    private static SandboxFhirServer sharedServer;
    private static RuntimeException sharedFailure;

    private final SandboxOptions options;
    private final H2Database database;
    private final AnnotationConfigApplicationContext context;
    private final WebServer webServer;
    private final String baseUrl;
    private final Duration startupTime;
    private final boolean shared;
    private final AtomicBoolean closed = new AtomicBoolean();

    private SandboxFhirServer(
            SandboxOptions options,
            H2Database database,
            AnnotationConfigApplicationContext context,
            WebServer webServer,
            Duration startupTime,
            boolean shared) {
        this.options = options;
        this.database = database;
        this.context = context;
        this.webServer = webServer;
        this.baseUrl = "http://" + hostForUrl(options.bindAddress()) + ":" + webServer.getPort() + FHIR_PATH;
        this.startupTime = startupTime;
        this.shared = shared;
    }

    /**
     * Starts a server and returns once it answers requests and delivers subscriptions.
     *
     * @throws IllegalStateException when the port is taken, the data directory is in use by another process, or HAPI
     *     fails to start (the message says which)
     */
    public static SandboxFhirServer start(SandboxOptions options) {
        return start(options, false);
    }

    /**
     * The one server of this JVM, started on first use with {@link SandboxOptions#inMemory()} and stopped when the
     * JVM exits. Its {@link #close()} does nothing, so a test cannot stop it under another test's feet.
     *
     * <p>Resources and Subscriptions persist between the tests that share it: give each test its own patients and
     * identifiers, and delete the Subscriptions a test creates (HAPI retries a failing rest-hook for about a minute).
     *
     * @throws IllegalStateException when it cannot start, and again at once on every later call in the same JVM
     */
    /** The shared server if something in this JVM has started it; never starts it. */
    public static synchronized java.util.Optional<SandboxFhirServer> sharedIfStarted() {
        return java.util.Optional.ofNullable(sharedServer);
    }

    public static synchronized SandboxFhirServer shared() {
        if (sharedFailure != null) {
            throw new IllegalStateException(
                    "The shared sandbox FHIR server failed to start earlier in this JVM: " + sharedFailure.getMessage(),
                    sharedFailure);
        }
        if (sharedServer == null) {
            try {
                sharedServer = start(SandboxOptions.inMemory(), true);
            } catch (RuntimeException e) {
                sharedFailure = e;
                throw e;
            }
            SandboxFhirServer server = sharedServer;
            Runtime.getRuntime().addShutdownHook(new Thread(server::stop, "sandbox-fhir-server-shutdown"));
        }
        return sharedServer;
    }

    private static SandboxFhirServer start(SandboxOptions options, boolean shared) {
        Objects.requireNonNull(options, "options");
        long startedAt = System.nanoTime();
        checkPortFree(options);
        // Opened here, not in the context, so that "data directory in use" reaches the caller as it is.
        H2Database database = H2Database.open(options.dataDirectoryIfAny());
        AnnotationConfigApplicationContext context = new AnnotationConfigApplicationContext();
        // HAPI's configuration classes refer to each other in cycles.
        context.setAllowCircularReferences(true);
        context.registerBean(SandboxOptions.class, () -> options);
        // The database outlives the context (it is shut down after HAPI has stopped), so the context must not close
        // the pool: an empty destroy method name stops Spring from inferring close().
        context.registerBean(DataSource.class, database::dataSource, bean -> bean.setDestroyMethodName(""));
        context.register(FhirServerConfig.class);
        WebServer webServer;
        try {
            refresh(context);
            webServer = startWebServer(options, context.getBean(RestfulServer.class));
        } catch (RuntimeException e) {
            context.close();
            database.close();
            throw e;
        }
        Duration startupTime = Duration.ofNanos(System.nanoTime() - startedAt);
        SandboxFhirServer server = new SandboxFhirServer(options, database, context, webServer, startupTime, shared);
        log.info(
                "Sandbox FHIR server ready at {} in {} ms ({})",
                server.baseUrl,
                startupTime.toMillis(),
                database.description());
        return server;
    }

    private static void refresh(AnnotationConfigApplicationContext context) {
        try {
            context.refresh();
        } catch (RuntimeException e) {
            throw new IllegalStateException("The sandbox FHIR server failed to start: " + rootMessage(e), e);
        }
    }

    /** Says "port in use" before HAPI's half-minute start rather than after it; Tomcat's own bind still decides. */
    private static void checkPortFree(SandboxOptions options) {
        if (options.port() == 0) {
            return;
        }
        try (ServerSocket probe = new ServerSocket(options.port(), 1, options.bindAddress())) {
            // free now; closed again at once
        } catch (IOException e) {
            throw portInUse(options.port(), options, e);
        }
    }

    private static IllegalStateException portInUse(int port, SandboxOptions options, Exception cause) {
        return new IllegalStateException(
                "Port " + port + " on " + options.bindAddress().getHostAddress()
                        + " is in use; choose another port (0 picks a free one)",
                cause);
    }

    private static WebServer startWebServer(SandboxOptions options, RestfulServer servlet) {
        TomcatServletWebServerFactory factory = new TomcatServletWebServerFactory(options.port());
        factory.setAddress(options.bindAddress());
        WebServer webServer = factory.getWebServer(servletContext -> {
            ServletRegistration.Dynamic registration = servletContext.addServlet("fhir", servlet);
            registration.addMapping(FHIR_PATH + "/*");
            // Scan the providers now, not on the first request.
            registration.setLoadOnStartup(1);
        });
        try {
            webServer.start();
        } catch (PortInUseException e) {
            webServer.destroy();
            throw portInUse(e.getPort(), options, e);
        }
        return webServer;
    }

    /** The FHIR base URL, e.g. {@code http://127.0.0.1:41234/fhir}, without a trailing slash. */
    public String baseUrl() {
        return baseUrl;
    }

    /** The port the server listens on (the chosen one when the options asked for port 0). */
    public int port() {
        return webServer.getPort();
    }

    /**
     * The server's R4 {@link FhirContext}, for parsers and clients. It is thread-safe and expensive: use this one
     * rather than creating another.
     */
    public FhirContext fhirContext() {
        return context.getBean(FhirContext.class);
    }

    public SandboxOptions options() {
        return options;
    }

    /** Wall-clock time from the call to {@code start} until the server answered requests. */
    public Duration startupTime() {
        return startupTime;
    }

    /** Stops the server and, for an in-memory database, discards its data. Does nothing on {@link #shared()}. */
    @Override
    public void close() {
        if (shared) {
            log.debug("close() ignored on the shared sandbox FHIR server; it stops when the JVM exits");
            return;
        }
        stop();
    }

    private void stop() {
        if (!closed.compareAndSet(false, true)) {
            return;
        }
        log.info("Stopping the sandbox FHIR server at {}", baseUrl);
        try {
            // stop() only detaches the connector; destroy() also ends Tomcat's non-daemon threads.
            webServer.destroy();
        } finally {
            try {
                context.close();
            } finally {
                database.close();
            }
        }
    }

    /** A server listening on every address is reached locally through the loopback address. */
    private static String hostForUrl(InetAddress bindAddress) {
        InetAddress address = bindAddress.isAnyLocalAddress() ? InetAddress.getLoopbackAddress() : bindAddress;
        String literal = address.getHostAddress();
        return address instanceof Inet6Address ? "[" + literal + "]" : literal;
    }

    private static String rootMessage(Throwable e) {
        Throwable root = e;
        while (root.getCause() != null && root.getCause() != root) {
            root = root.getCause();
        }
        return root.getMessage();
    }
}
