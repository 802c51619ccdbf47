package org.lungflag.sandbox.cli;

import java.io.PrintStream;
import java.util.Arrays;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.slf4j.bridge.SLF4JBridgeHandler;

/**
 * The sandbox executable: {@code java -jar lungflag-sandbox-exec.jar <command> [options]}. A small dispatcher; each
 * sub-command lives in its own class.
 *
 * <p>Exit codes: 0 done, 1 the command failed (the message says why), 2 bad arguments (with the usage).
 */
public final class SandboxCli {

    static final int EXIT_OK = 0;
    static final int EXIT_FAILURE = 1;
    static final int EXIT_USAGE = 2;

    /** Our logging set-up for the process, unless the caller names another with {@code -Dlogback.configurationFile}. */
    private static final String LOGGING_CONFIGURATION = "org/lungflag/sandbox/cli/logback-sandbox.xml";

    private final Map<String, Command> commands = new LinkedHashMap<>();

    SandboxCli(List<Command> available) {
        available.forEach(command -> commands.put(command.name(), command));
    }

    static SandboxCli withAllCommands() {
        return new SandboxCli(List.of(new ServeCommand(), new PlayCommand(), new GenerateCommand()));
    }

    public static void main(String[] args) {
        configureLogging();
        int exitCode = withAllCommands().run(Arrays.asList(args), System.out, System.err);
        if (exitCode != EXIT_OK) {
            System.exit(exitCode);
        }
    }

    int run(List<String> arguments, PrintStream out, PrintStream err) {
        if (arguments.isEmpty()) {
            err.println("No command given.");
            err.println(usage());
            return EXIT_USAGE;
        }
        String name = arguments.get(0);
        if (List.of("help", "--help", "-h").contains(name)) {
            out.println(usage());
            return EXIT_OK;
        }
        Command command = commands.get(name);
        if (command == null) {
            err.println("Unknown command '" + name + "'.");
            err.println(usage());
            return EXIT_USAGE;
        }
        try {
            return command.run(arguments.subList(1, arguments.size()), out, err);
        } catch (UsageException e) {
            err.println(e.getMessage());
            err.println("Usage: " + command.usage());
            return EXIT_USAGE;
        }
    }

    String usage() {
        StringBuilder usage = new StringBuilder("Usage: java -jar lungflag-sandbox-exec.jar <command> [options]")
                .append(System.lineSeparator())
                .append(System.lineSeparator())
                .append("Commands:")
                .append(System.lineSeparator());
        commands.values()
                .forEach(command -> usage.append(String.format("  %-8s %s%n", command.name(), command.summary())));
        usage.append(String.format("  %-8s %s%n", "help", "show this message"));
        commands.values()
                .forEach(command -> usage.append(System.lineSeparator())
                        .append(command.usage())
                        .append(System.lineSeparator()));
        return usage.toString().stripTrailing();
    }

    private static void configureLogging() {
        if (System.getProperty("logback.configurationFile") == null) {
            System.setProperty("logback.configurationFile", LOGGING_CONFIGURATION);
        }
        // Tomcat logs through java.util.logging; send it the same way as everything else.
        SLF4JBridgeHandler.removeHandlersForRootLogger();
        SLF4JBridgeHandler.install();
    }
}
