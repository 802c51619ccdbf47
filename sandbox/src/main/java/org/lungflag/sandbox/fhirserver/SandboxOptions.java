package org.lungflag.sandbox.fhirserver;

import java.net.InetAddress;
import java.nio.file.Path;
import java.time.Duration;
import java.util.Objects;
import java.util.Optional;

/**
 * How to run a {@link SandboxFhirServer}.
 *
 * @param port TCP port to listen on; {@code 0} picks a free port
 * @param bindAddress the address the server listens on; the loopback address unless the sandbox must be reached from
 *     another host (it has no security)
 * @param dataDirectory where the H2 database files live so that a later run resumes with the same resources; {@code
 *     null} keeps everything in memory and loses it on {@link SandboxFhirServer#close()}
 * @param subscriptionInterval how often HAPI submits queued resource changes to the subscription matcher; this is
 *     the floor of create-to-delivery latency (HAPI's own default is 5 s)
 */
public record SandboxOptions(int port, InetAddress bindAddress, Path dataDirectory, Duration subscriptionInterval) {

    /** Short enough that a rest-hook arrives within about half a second of the write. */
    public static final Duration DEFAULT_SUBSCRIPTION_INTERVAL = Duration.ofMillis(500);

    public SandboxOptions {
        if (port < 0 || port > 65_535) {
            throw new IllegalArgumentException("port must be 0 (any free port) or 1..65535, was " + port);
        }
        Objects.requireNonNull(bindAddress, "bindAddress");
        Objects.requireNonNull(subscriptionInterval, "subscriptionInterval");
        if (subscriptionInterval.toMillis() < 100) {
            throw new IllegalArgumentException(
                    "subscriptionInterval must be at least 100 ms, was " + subscriptionInterval.toMillis() + " ms");
        }
        if (dataDirectory != null) {
            dataDirectory = dataDirectory.toAbsolutePath().normalize();
        }
    }

    /** A random free port on the loopback address, an in-memory database and a 500 ms subscription interval. */
    public static SandboxOptions inMemory() {
        return new SandboxOptions(0, InetAddress.getLoopbackAddress(), null, DEFAULT_SUBSCRIPTION_INTERVAL);
    }

    public SandboxOptions withPort(int newPort) {
        return new SandboxOptions(newPort, bindAddress, dataDirectory, subscriptionInterval);
    }

    public SandboxOptions withBindAddress(InetAddress newBindAddress) {
        return new SandboxOptions(port, newBindAddress, dataDirectory, subscriptionInterval);
    }

    /** Keeps the database in files under {@code directory} (created if missing) so that the next run resumes. */
    public SandboxOptions withDataDirectory(Path directory) {
        return new SandboxOptions(
                port, bindAddress, Objects.requireNonNull(directory, "directory"), subscriptionInterval);
    }

    public SandboxOptions withSubscriptionInterval(Duration newInterval) {
        return new SandboxOptions(port, bindAddress, dataDirectory, newInterval);
    }

    /** The data directory, empty when the database is in memory. */
    public Optional<Path> dataDirectoryIfAny() {
        return Optional.ofNullable(dataDirectory);
    }
}
