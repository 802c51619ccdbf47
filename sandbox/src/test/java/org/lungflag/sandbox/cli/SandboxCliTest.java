package org.lungflag.sandbox.cli;

import static org.assertj.core.api.Assertions.assertThat;

import java.io.ByteArrayOutputStream;
import java.io.PrintStream;
import java.nio.charset.StandardCharsets;
import java.util.List;
import org.junit.jupiter.api.Test;

/** The dispatcher: a clear usage message, exit 0 for help, exit 2 for anything it cannot run. */
class SandboxCliTest {

    private final ByteArrayOutputStream out = new ByteArrayOutputStream();
    private final ByteArrayOutputStream err = new ByteArrayOutputStream();

    private int run(String... arguments) {
        return SandboxCli.withAllCommands()
                .run(
                        List.of(arguments),
                        new PrintStream(out, true, StandardCharsets.UTF_8),
                        new PrintStream(err, true, StandardCharsets.UTF_8));
    }

    private String out() {
        return out.toString(StandardCharsets.UTF_8);
    }

    private String err() {
        return err.toString(StandardCharsets.UTF_8);
    }

    @Test
    void helpListsEveryCommandWithItsOptionsAndExitsZero() {
        int exitCode = run("help");

        assertThat(exitCode).isZero();
        assertThat(out())
                .startsWith("Usage: java -jar lungflag-sandbox-exec.jar <command> [options]")
                .contains(
                        "serve ", "help ", "--port N", "--data DIR", "--bind ADDRESS", "--subscription-interval-ms N");
        assertThat(err()).isEmpty();
    }

    @Test
    void noCommandPrintsTheUsageAndExitsTwo() {
        int exitCode = run();

        assertThat(exitCode).isEqualTo(2);
        assertThat(err()).startsWith("No command given.").contains("Commands:");
    }

    @Test
    void unknownCommandIsNamedAndExitsTwo() {
        int exitCode = run("start");

        assertThat(exitCode).isEqualTo(2);
        assertThat(err()).startsWith("Unknown command 'start'.").contains("Commands:");
    }

    @Test
    void badServeOptionIsNamedWithTheServeUsageAndExitsTwo() {
        int exitCode = run("serve", "--port", "eighty");

        assertThat(exitCode).isEqualTo(2);
        assertThat(err())
                .startsWith("serve: option '--port' must be a whole number from 0 to 65535, was 'eighty'")
                .contains("Usage: serve [--port N]");
        assertThat(out()).isEmpty();
    }

    @Test
    void unknownServeOptionIsNamedAndExitsTwo() {
        int exitCode = run("serve", "--verbose", "yes");

        assertThat(exitCode).isEqualTo(2);
        assertThat(err()).startsWith("serve: unknown option '--verbose'");
    }
}
