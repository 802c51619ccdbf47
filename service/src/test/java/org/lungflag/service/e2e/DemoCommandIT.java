package org.lungflag.service.e2e;

import static org.assertj.core.api.Assertions.assertThat;
import static org.junit.jupiter.api.Assumptions.assumeTrue;

import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import java.util.concurrent.TimeUnit;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.junit.jupiter.api.Test;

/**
 * The demo command as README.md's command table runs it, from the repository root with the packaged jars (so it
 * runs in {@code verify}, after {@code package}): the sandbox executable's {@code demo} starts the FHIR server and
 * the service jar as a child JVM, plays a short part of the scenario at full speed, names the URLs to look at and
 * reports the Flags that appeared; with {@code --after-play exit} it stops both and exits 0. Free ports, so it does
 * not collide with anything else on the machine. Skipped, with a message, when the jars are not built.
 */
class DemoCommandIT {

    private static final Path ROOT = Path.of("..").toAbsolutePath().normalize();
    private static final Path SANDBOX_JAR = ROOT.resolve("sandbox/target/lungflag-sandbox-exec.jar");
    private static final Path SERVICE_JAR = ROOT.resolve("service/target/lungflag-service.jar");

    @Test
    void theDemoCommandStartsEverythingPlaysTheScenarioNamesTheUrlsAndFlagsAppear() throws Exception {
        assumeTrue(
                Files.isRegularFile(SANDBOX_JAR) && Files.isRegularFile(SERVICE_JAR),
                "DemoCommandIT needs the packaged jars " + SANDBOX_JAR + " and " + SERVICE_JAR
                        + "; run it in 'verify' after 'package' (./mvnw -B verify)");
        Path work = ROOT.resolve("service/target/demo-it");
        Path output = ROOT.resolve("service/target/demo-it-output.txt");
        List<String> command = new ArrayList<>(List.of(
                Path.of(System.getProperty("java.home"), "bin", "java").toString(),
                "-jar",
                SANDBOX_JAR.toString(),
                "demo",
                "--hours",
                "12",
                "--speed",
                "max",
                "--port",
                "0",
                "--service-port",
                "0",
                "--work",
                work.toString(),
                "--after-play",
                "exit"));
        long started = System.nanoTime();
        Process demo = new ProcessBuilder(command)
                .directory(ROOT.toFile())
                .redirectErrorStream(true)
                .redirectOutput(output.toFile())
                .start();
        boolean finished = demo.waitFor(12, TimeUnit.MINUTES);
        if (!finished) {
            demo.destroy();
            demo.waitFor(40, TimeUnit.SECONDS);
            demo.destroyForcibly();
        }
        String text = Files.readString(output, StandardCharsets.UTF_8);
        System.out.println(text);
        System.out.printf(
                "demo command (12 h at full speed) took %d s%n",
                Duration.ofNanos(System.nanoTime() - started).toSeconds());
        assertThat(finished).as("the demo finished within 12 minutes").isTrue();
        assertThat(demo.exitValue()).as("exit code; output:%n%s", text).isZero();

        Matcher base = Pattern.compile("FHIR server base URL\\s+(http://127\\.0\\.0\\.1:\\d+/fhir)")
                .matcher(text);
        assertThat(base.find()).as("the FHIR base URL is printed").isTrue();
        assertThat(text)
                .contains("GET " + base.group(1) + "/Flag?subject=Patient/demo-01")
                .contains("/Provenance?target=Flag/")
                .containsPattern("Lungflag service\\s+http://127\\.0\\.0\\.1:\\d+")
                .contains("/actuator/health")
                .contains("/console")
                .contains("its log: " + work.resolve("service.log"))
                .contains("clinical hour    0")
                .contains("clinical hour    8")
                .contains("Stopped.");
        assertThat(work.resolve("service.log")).exists();
        assertThat(Files.readString(work.resolve("service.log"))).contains("Started");

        Matcher figures = Pattern.compile("(\\d+) Flags on the server \\((\\d+) active\\)")
                .matcher(text);
        assertThat(figures.find())
                .as("the demo reports the Flags on the server")
                .isTrue();
        // the first 12 h: at least the hypoxemia advisories of demo-01, -03, -05, -07, -08, the child's, demo-04's
        // tidal volume and demo-05's driving pressure (expected-advisories.csv)
        assertThat(Long.parseLong(figures.group(1))).isGreaterThanOrEqualTo(8);
        assertThat(text).contains("Patient/demo-06: pediatric-hypoxemia-");
        assertThat(text).contains("Patient/demo-04: tidal-volume-high");
    }
}
