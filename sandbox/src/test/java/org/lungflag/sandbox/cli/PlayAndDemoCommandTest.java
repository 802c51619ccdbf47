package org.lungflag.sandbox.cli;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import java.io.ByteArrayOutputStream;
import java.io.PrintStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.lungflag.sandbox.demo.DemoRun;
import org.lungflag.sandbox.player.PlayOptions;

/** The options of {@code play} and {@code demo}: defaults as documented, bad values named. */
class PlayAndDemoCommandTest {

    @Test
    void playDefaultsTo72HoursInAboutThreeMinutes() {
        PlayOptions options = new PlayCommand().parse(List.of("--fhir-base-url", "http://fhir:8080/fhir/"));
        assertThat(options.fhirBaseUrl()).hasToString("http://fhir:8080/fhir");
        assertThat(options.hours()).isEqualTo(72);
        // 72 h = 259,200 clinical seconds in 180 s
        assertThat(options.speed()).isEqualTo(1440);
        assertThat(options.fullSpeed()).isFalse();
    }

    @Test
    void playTakesASpeedOrMaxAndAShorterScenario() {
        PlayOptions max = new PlayCommand()
                .parse(List.of("--fhir-base-url", "http://127.0.0.1:8090/fhir", "--speed", "max", "--hours", "12"));
        assertThat(max.fullSpeed()).isTrue();
        assertThat(max.hours()).isEqualTo(12);
        PlayOptions slow = new PlayCommand().parse(List.of("--fhir-base-url=http://127.0.0.1:8090/fhir", "--speed=60"));
        assertThat(slow.speed()).isEqualTo(60);
    }

    @Test
    void badPlayOptionsAreNamed() {
        assertThatThrownBy(() -> new PlayCommand().parse(List.of()))
                .isInstanceOf(UsageException.class)
                .hasMessage("play: option '--fhir-base-url' is required");
        assertThatThrownBy(() -> new PlayCommand().parse(List.of("--fhir-base-url", "fhir:8080")))
                .hasMessageStartingWith("play: option '--fhir-base-url' must be an http(s) URL");
        assertThatThrownBy(() -> new PlayCommand().parse(List.of("--fhir-base-url", "http://h/fhir", "--speed", "0")))
                .hasMessage("play: option '--speed' must be a number from 1 to 1000000 or 'max', was '0'");
        assertThatThrownBy(() -> new PlayCommand().parse(List.of("--fhir-base-url", "http://h/fhir", "--hours", "73")))
                .hasMessage("play: option '--hours' must be a whole number from 1 to 72, was '73'");
    }

    @Test
    void demoDefaultsAndOptions(@TempDir Path dir) throws Exception {
        Path jar = Files.createFile(dir.resolve("lungflag-service.jar"));
        DemoRun.Settings settings = new DemoCommand()
                .parse(List.of(
                        "--service-jar", jar.toString(),
                        "--work", dir.resolve("work").toString(),
                        "--hours", "6",
                        "--speed", "max",
                        "--after-play", "exit",
                        "--port", "0"));
        assertThat(settings.serviceJar()).isEqualTo(jar.toAbsolutePath());
        assertThat(settings.workDirectory()).isEqualTo(dir.resolve("work").toAbsolutePath());
        assertThat(settings.play().hours()).isEqualTo(6);
        assertThat(settings.play().fullSpeed()).isTrue();
        assertThat(settings.exitAfterPlay()).isTrue();
        assertThat(settings.fhirPort()).isZero();
        assertThat(settings.servicePort()).isEqualTo(8080);

        DemoRun.Settings defaults = new DemoCommand().parse(List.of("--service-jar", jar.toString()));
        assertThat(defaults.fhirPort()).isEqualTo(8090);
        assertThat(defaults.exitAfterPlay()).isFalse();
        assertThat(defaults.play().speed()).isEqualTo(PlayOptions.DEFAULT_SPEED);
        assertThat(defaults.workDirectory()).isEqualTo(Path.of("target/demo").toAbsolutePath());
    }

    @Test
    void aMissingServiceJarSaysHowToBuildIt() {
        ByteArrayOutputStream err = new ByteArrayOutputStream();
        int exit = SandboxCli.withAllCommands()
                .run(
                        List.of("demo", "--service-jar", "no/such/lungflag-service.jar"),
                        new PrintStream(new ByteArrayOutputStream(), true, StandardCharsets.UTF_8),
                        new PrintStream(err, true, StandardCharsets.UTF_8));
        assertThat(exit).isEqualTo(2);
        assertThat(err.toString(StandardCharsets.UTF_8))
                .startsWith("demo: the service jar ")
                .contains("does not exist");
        assertThatThrownBy(() -> new DemoCommand().parse(List.of("--after-play", "later")))
                .isInstanceOf(UsageException.class);
    }
}
