package org.lungflag.sandbox.cli;

import java.io.PrintStream;
import java.net.URI;
import java.net.URISyntaxException;
import java.nio.file.Files;
import java.nio.file.InvalidPathException;
import java.nio.file.Path;
import java.time.Duration;
import java.util.List;
import java.util.Set;
import org.lungflag.sandbox.demo.DemoException;
import org.lungflag.sandbox.demo.DemoRun;
import org.lungflag.sandbox.player.PlayException;
import org.lungflag.sandbox.player.PlayOptions;

/**
 * {@code demo}: the whole job on one machine with only a JDK. Starts the embedded FHIR server in this process and
 * the service jar as a child JVM on H2, plays the invented scenario, prints where to look; Ctrl-C stops both.
 */
final class DemoCommand implements Command {

    static final String DEFAULT_SERVICE_JAR = "service/target/lungflag-service.jar";
    static final String DEFAULT_WORK = "target/demo";

    private static final String PORT = "port";
    private static final String SERVICE_PORT = "service-port";
    private static final String SERVICE_JAR = "service-jar";
    private static final String WORK = "work";
    private static final String AFTER_PLAY = "after-play";

    @Override
    public String name() {
        return "demo";
    }

    @Override
    public String summary() {
        return "run the demo: FHIR server + Lungflag service on H2 + the invented scenario; Ctrl-C stops it";
    }

    @Override
    public String usage() {
        return String.join(
                System.lineSeparator(),
                "demo [--speed N|max] [--hours H] [--port N] [--service-port N] [--service-jar FILE] [--work DIR]"
                        + " [--after-play wait|exit]",
                PlayCommand.speedUsage(),
                PlayCommand.hoursUsage(),
                "  --port N             the FHIR server's port (default " + ServeCommand.DEFAULT_PORT
                        + "; 0 picks a free one)",
                "  --service-port N     the service's port (default 8080; 0 picks a free one)",
                "  --service-jar FILE   the service jar (default " + DEFAULT_SERVICE_JAR
                        + ", found from the current folder or next to this jar's module)",
                "  --work DIR           the service's H2 database and log (default " + DEFAULT_WORK
                        + "; emptied at every start)",
                "  --after-play wait|exit  keep both running until Ctrl-C (default), or stop once the Flags are"
                        + " written");
    }

    /** Turns the command line into demo settings; exposed for tests. */
    DemoRun.Settings parse(List<String> arguments) {
        CommandOptions options = CommandOptions.parse(
                name(),
                arguments,
                Set.of(PlayCommand.SPEED, PlayCommand.HOURS, PORT, SERVICE_PORT, SERVICE_JAR, WORK, AFTER_PLAY));
        PlayOptions play = PlayCommand.withSpeedAndHours(
                name(), options, PlayOptions.defaults(URI.create("http://127.0.0.1/fhir")));
        String afterPlay = options.text(AFTER_PLAY).orElse("wait");
        if (!afterPlay.equals("wait") && !afterPlay.equals("exit")) {
            throw new UsageException("demo: option '--after-play' must be 'wait' or 'exit', was '" + afterPlay + "'");
        }
        return new DemoRun.Settings(
                serviceJar(options.text(SERVICE_JAR).orElse(null)),
                path(WORK, options.text(WORK).orElse(DEFAULT_WORK))
                        .toAbsolutePath()
                        .normalize(),
                options.integer(PORT, 0, 65_535, ServeCommand.DEFAULT_PORT),
                options.integer(SERVICE_PORT, 0, 65_535, 8080),
                play,
                afterPlay.equals("exit"),
                Duration.ofSeconds(240));
    }

    @Override
    public int run(List<String> arguments, PrintStream out, PrintStream err) {
        DemoRun.Settings settings = parse(arguments);
        DemoRun demo = new DemoRun(settings, out);
        Thread main = Thread.currentThread();
        Thread hook = new Thread(
                () -> {
                    main.interrupt();
                    demo.stop();
                },
                "sandbox-demo-shutdown");
        Runtime.getRuntime().addShutdownHook(hook);
        try {
            demo.run();
            demo.stop();
            return SandboxCli.EXIT_OK;
        } catch (DemoException | PlayException e) {
            err.println("demo: " + e.getMessage());
            demo.stop();
            return SandboxCli.EXIT_FAILURE;
        } catch (InterruptedException e) {
            // Ctrl-C: the shutdown hook stops the service and the server
            return SandboxCli.EXIT_OK;
        } finally {
            try {
                Runtime.getRuntime().removeShutdownHook(hook);
            } catch (IllegalStateException e) {
                // already shutting down
            }
        }
    }

    /** The given jar, else the default from the current folder, else from the repository this jar was built in. */
    static Path serviceJar(String given) {
        if (given != null) {
            Path jar = path(SERVICE_JAR, given);
            if (!Files.isRegularFile(jar)) {
                throw new UsageException("demo: the service jar " + jar.toAbsolutePath() + " does not exist");
            }
            return jar.toAbsolutePath().normalize();
        }
        Path fromHere = Path.of(DEFAULT_SERVICE_JAR);
        if (Files.isRegularFile(fromHere)) {
            return fromHere.toAbsolutePath().normalize();
        }
        try {
            // sandbox/target/lungflag-sandbox-exec.jar -> ../../service/target/lungflag-service.jar
            URI self = DemoCommand.class
                    .getProtectionDomain()
                    .getCodeSource()
                    .getLocation()
                    .toURI();
            Path besideModule = Path.of(self).toAbsolutePath().getParent().resolve("../../" + DEFAULT_SERVICE_JAR);
            if (Files.isRegularFile(besideModule)) {
                return besideModule.normalize();
            }
        } catch (URISyntaxException | RuntimeException e) {
            // fall through to the message
        }
        throw new UsageException("demo: the service jar " + fromHere.toAbsolutePath() + " does not exist; build it"
                + " first from the repository root: ./mvnw -B -q -DskipTests package (or name it with --service-jar)");
    }

    private static Path path(String option, String text) {
        try {
            return Path.of(text);
        } catch (InvalidPathException e) {
            throw new UsageException("demo: option '--" + option + "' is not a valid path: '" + text + "'");
        }
    }
}
