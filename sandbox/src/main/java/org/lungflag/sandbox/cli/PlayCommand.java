package org.lungflag.sandbox.cli;

import ca.uhn.fhir.context.FhirContext;
import java.io.PrintStream;
import java.net.URI;
import java.net.URISyntaxException;
import java.util.List;
import java.util.Locale;
import java.util.Set;
import org.lungflag.sandbox.player.PlayException;
import org.lungflag.sandbox.player.PlayOptions;
import org.lungflag.sandbox.player.ScenarioPlayer;
import org.lungflag.sandbox.scenario.DemoScenario;

/** {@code play}: posts the invented demo scenario to a FHIR server in accelerated clinical time. */
final class PlayCommand implements Command {

    static final String FHIR_BASE_URL = "fhir-base-url";
    static final String SPEED = "speed";
    static final String HOURS = "hours";

    @Override
    public String name() {
        return "play";
    }

    @Override
    public String summary() {
        return "post the invented demo scenario to a FHIR server in accelerated clinical time, ending now";
    }

    @Override
    public String usage() {
        return String.join(
                System.lineSeparator(),
                "play --fhir-base-url URL [--speed N|max] [--hours H]",
                "  --fhir-base-url URL  the FHIR server's base URL, e.g. http://127.0.0.1:8090/fhir",
                speedUsage(),
                hoursUsage());
    }

    static String speedUsage() {
        return "  --speed N|max        clinical seconds per wall-clock second (default "
                + (long) PlayOptions.DEFAULT_SPEED + ": 72 h in about 3 min; max: as fast as the server accepts)";
    }

    static String hoursUsage() {
        return "  --hours H            play only the first H clinical hours (1 to 72, default 72)";
    }

    /** Turns the command line into play options; exposed for tests. */
    PlayOptions parse(List<String> arguments) {
        CommandOptions options = CommandOptions.parse(name(), arguments, Set.of(FHIR_BASE_URL, SPEED, HOURS));
        String url = options.text(FHIR_BASE_URL)
                .orElseThrow(() -> new UsageException("play: option '--fhir-base-url' is required"));
        return withSpeedAndHours(name(), options, PlayOptions.defaults(baseUrl(name(), url)));
    }

    static PlayOptions withSpeedAndHours(String command, CommandOptions options, PlayOptions play) {
        return play.withSpeed(speed(command, options.text(SPEED).orElse(null)))
                .withHours(options.integer(HOURS, 1, 72, 72));
    }

    static URI baseUrl(String command, String text) {
        try {
            URI uri = new URI(text);
            if (("http".equals(uri.getScheme()) || "https".equals(uri.getScheme())) && uri.getHost() != null) {
                return uri;
            }
        } catch (URISyntaxException e) {
            // reported below
        }
        throw new UsageException(
                command + ": option '--fhir-base-url' must be an http(s) URL such as http://127.0.0.1:8090/fhir, was '"
                        + text + "'");
    }

    static double speed(String command, String text) {
        if (text == null) {
            return PlayOptions.DEFAULT_SPEED;
        }
        if ("max".equals(text.trim().toLowerCase(Locale.ROOT))) {
            return PlayOptions.FULL_SPEED;
        }
        try {
            double value = Double.parseDouble(text.trim());
            if (value >= 1 && value <= 1_000_000) {
                return value;
            }
        } catch (NumberFormatException e) {
            // reported below
        }
        throw new UsageException(
                command + ": option '--speed' must be a number from 1 to 1000000 or 'max', was '" + text + "'");
    }

    @Override
    public int run(List<String> arguments, PrintStream out, PrintStream err) {
        PlayOptions options = parse(arguments);
        try {
            new ScenarioPlayer(FhirContext.forR4Cached(), DemoScenario.load()).play(options, out);
            return SandboxCli.EXIT_OK;
        } catch (PlayException e) {
            err.println("play: " + e.getMessage());
            return SandboxCli.EXIT_FAILURE;
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            err.println("play: stopped; what was posted stays on the server");
            return SandboxCli.EXIT_FAILURE;
        }
    }
}
