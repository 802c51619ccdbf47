package org.lungflag.sandbox.cli;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import java.io.IOException;
import java.net.InetAddress;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.lungflag.sandbox.fhirserver.SandboxOptions;

/** How {@code serve}'s command line becomes server options, without starting a server. */
class ServeCommandTest {

    private final ServeCommand serve = new ServeCommand();

    @Test
    void withoutOptionsServesFromMemoryOnTheLoopbackAddressAtPort8090() {
        SandboxOptions options = serve.parse(List.of());

        assertThat(options.port()).isEqualTo(8090);
        assertThat(options.bindAddress()).isEqualTo(InetAddress.getLoopbackAddress());
        assertThat(options.dataDirectoryIfAny()).isEmpty();
        assertThat(options.subscriptionInterval()).isEqualTo(Duration.ofMillis(500));
    }

    @Test
    void acceptsEachOptionAsSeparateWordOrWithEquals(@TempDir Path data) {
        SandboxOptions options = serve.parse(
                List.of("--port", "0", "--data=" + data, "--bind", "0.0.0.0", "--subscription-interval-ms=250"));

        assertThat(options.port()).isZero();
        assertThat(options.dataDirectoryIfAny()).contains(data.toAbsolutePath().normalize());
        assertThat(options.bindAddress().isAnyLocalAddress()).isTrue();
        assertThat(options.subscriptionInterval()).isEqualTo(Duration.ofMillis(250));
    }

    @Test
    void refusesAPortOutsideTheTcpRange() {
        assertThatThrownBy(() -> serve.parse(List.of("--port", "70000")))
                .isInstanceOf(UsageException.class)
                .hasMessage("serve: option '--port' must be a whole number from 0 to 65535, was '70000'");
    }

    @Test
    void refusesADataPathThatIsAFile(@TempDir Path folder) throws IOException {
        Path file = Files.writeString(folder.resolve("not-a-directory"), "x");

        assertThatThrownBy(() -> serve.parse(List.of("--data", file.toString())))
                .isInstanceOf(UsageException.class)
                .hasMessage("serve: option '--data' names a file, not a directory: '" + file + "'");
    }

    @Test
    void refusesAnOptionWithoutItsValue() {
        assertThatThrownBy(() -> serve.parse(List.of("--data", "--port", "0")))
                .isInstanceOf(UsageException.class)
                .hasMessage("serve: option '--data' needs a value");
    }

    @Test
    void refusesARepeatedOption() {
        assertThatThrownBy(() -> serve.parse(List.of("--port", "1", "--port", "2")))
                .isInstanceOf(UsageException.class)
                .hasMessage("serve: option '--port' is given twice");
    }

    @Test
    void refusesABareWord() {
        assertThatThrownBy(() -> serve.parse(List.of("8090")))
                .isInstanceOf(UsageException.class)
                .hasMessage("serve: unexpected argument '8090'");
    }

    @Test
    void refusesASubscriptionIntervalBelow100Milliseconds() {
        assertThatThrownBy(() -> serve.parse(List.of("--subscription-interval-ms", "10")))
                .isInstanceOf(UsageException.class)
                .hasMessageStartingWith("serve: option '--subscription-interval-ms' must be a whole number from 100");
    }
}
