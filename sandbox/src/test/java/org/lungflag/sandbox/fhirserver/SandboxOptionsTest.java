package org.lungflag.sandbox.fhirserver;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import java.net.InetAddress;
import java.nio.file.Path;
import java.time.Duration;
import org.junit.jupiter.api.Test;

class SandboxOptionsTest {

    @Test
    void inMemoryDefaultsToAFreePortOnLoopbackWithAHalfSecondInterval() {
        SandboxOptions options = SandboxOptions.inMemory();

        assertThat(options.port()).isZero();
        assertThat(options.bindAddress()).isEqualTo(InetAddress.getLoopbackAddress());
        assertThat(options.dataDirectoryIfAny()).isEmpty();
        assertThat(options.subscriptionInterval()).isEqualTo(Duration.ofMillis(500));
    }

    @Test
    void dataDirectoryIsMadeAbsolute() {
        SandboxOptions options = SandboxOptions.inMemory().withDataDirectory(Path.of("demo-data/../demo-data/fhir"));

        assertThat(options.dataDirectoryIfAny())
                .contains(Path.of("demo-data/fhir").toAbsolutePath());
    }

    @Test
    void refusesAPortOutsideTheTcpRange() {
        assertThatThrownBy(() -> SandboxOptions.inMemory().withPort(65_536))
                .isInstanceOf(IllegalArgumentException.class)
                .hasMessage("port must be 0 (any free port) or 1..65535, was 65536");
    }

    @Test
    void refusesASubscriptionIntervalBelow100Milliseconds() {
        assertThatThrownBy(() -> SandboxOptions.inMemory().withSubscriptionInterval(Duration.ofMillis(99)))
                .isInstanceOf(IllegalArgumentException.class)
                .hasMessage("subscriptionInterval must be at least 100 ms, was 99 ms");
    }
}
