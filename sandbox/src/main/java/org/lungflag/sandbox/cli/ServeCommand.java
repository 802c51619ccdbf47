package org.lungflag.sandbox.cli;

import java.io.PrintStream;
import java.net.InetAddress;
import java.net.UnknownHostException;
import java.nio.file.Files;
import java.nio.file.InvalidPathException;
import java.nio.file.Path;
import java.time.Duration;
import java.util.List;
import java.util.Locale;
import java.util.Set;
import java.util.concurrent.CountDownLatch;
import org.lungflag.sandbox.fhirserver.SandboxFhirServer;
import org.lungflag.sandbox.fhirserver.SandboxOptions;

/** {@code serve}: runs the sandbox FHIR server in the foreground until the process is stopped (Ctrl-C). */
final class ServeCommand implements Command {

    static final int DEFAULT_PORT = 8090;

    private static final String PORT = "port";
    private static final String DATA = "data";
    private static final String BIND = "bind";
    private static final String SUBSCRIPTION_INTERVAL_MS = "subscription-interval-ms";

    @Override
    public String name() {
        return "serve";
    }

    @Override
    public String summary() {
        return "run the sandbox FHIR server (HAPI JPA, FHIR R4, rest-hook subscriptions) until Ctrl-C";
    }

    @Override
    public String usage() {
        return String.join(
                System.lineSeparator(),
                "serve [--port N] [--data DIR] [--bind ADDRESS] [--subscription-interval-ms N]",
                "  --port N                      TCP port (default " + DEFAULT_PORT + "; 0 picks a free port)",
                "  --data DIR                    keep the database in DIR so that the next run resumes"
                        + " (default: in memory, lost on stop)",
                "  --bind ADDRESS                address to listen on (default 127.0.0.1; the server has no security)",
                "  --subscription-interval-ms N  how often changes go to the subscription matcher (default "
                        + SandboxOptions.DEFAULT_SUBSCRIPTION_INTERVAL.toMillis() + ")");
    }

    /** Turns the command line into server options; exposed for tests. */
    SandboxOptions parse(List<String> arguments) {
        CommandOptions options =
                CommandOptions.parse(name(), arguments, Set.of(PORT, DATA, BIND, SUBSCRIPTION_INTERVAL_MS));
        SandboxOptions server = SandboxOptions.inMemory()
                .withPort(options.integer(PORT, 0, 65_535, DEFAULT_PORT))
                .withSubscriptionInterval(
                        Duration.ofMillis(options.integer(SUBSCRIPTION_INTERVAL_MS, 100, 600_000, (int)
                                SandboxOptions.DEFAULT_SUBSCRIPTION_INTERVAL.toMillis())));
        if (options.text(BIND).isPresent()) {
            server = server.withBindAddress(bindAddress(options.text(BIND).get()));
        }
        if (options.text(DATA).isPresent()) {
            server = server.withDataDirectory(dataDirectory(options.text(DATA).get()));
        }
        return server;
    }

    @Override
    public int run(List<String> arguments, PrintStream out, PrintStream err) {
        SandboxOptions options = parse(arguments);
        out.println("Starting the Lungflag sandbox FHIR server (HAPI FHIR JPA, FHIR R4, "
                + options.dataDirectoryIfAny()
                        .map(directory -> "data in " + directory)
                        .orElse("data in memory, lost on stop")
                + ") ...");
        SandboxFhirServer server;
        try {
            server = SandboxFhirServer.start(options);
        } catch (RuntimeException e) {
            err.println("serve: cannot start: " + e.getMessage());
            return SandboxCli.EXIT_FAILURE;
        }
        CountDownLatch stopped = new CountDownLatch(1);
        Runtime.getRuntime()
                .addShutdownHook(new Thread(
                        () -> {
                            out.println("Stopping the sandbox FHIR server ...");
                            server.close();
                            out.println("Stopped.");
                            stopped.countDown();
                        },
                        "sandbox-serve-shutdown"));
        out.println("FHIR base URL: " + server.baseUrl());
        out.printf(
                Locale.ROOT,
                "Ready in %.1f s. No security: for local demos and tests only. Press Ctrl-C to stop.%n",
                server.startupTime().toMillis() / 1000.0);
        out.flush();
        try {
            stopped.await();
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
        }
        return SandboxCli.EXIT_OK;
    }

    private static InetAddress bindAddress(String text) {
        try {
            return InetAddress.getByName(text);
        } catch (UnknownHostException e) {
            throw new UsageException("serve: option '--bind' is not a known address: '" + text + "'");
        }
    }

    private static Path dataDirectory(String text) {
        Path directory;
        try {
            directory = Path.of(text);
        } catch (InvalidPathException e) {
            throw new UsageException("serve: option '--data' is not a valid path: '" + text + "'");
        }
        if (Files.exists(directory) && !Files.isDirectory(directory)) {
            throw new UsageException("serve: option '--data' names a file, not a directory: '" + text + "'");
        }
        return directory;
    }
}
