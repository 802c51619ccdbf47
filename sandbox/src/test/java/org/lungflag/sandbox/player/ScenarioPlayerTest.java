package org.lungflag.sandbox.player;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.rest.api.CacheControlDirective;
import ca.uhn.fhir.rest.client.api.IGenericClient;
import ca.uhn.fhir.rest.client.api.ServerValidationModeEnum;
import java.io.ByteArrayOutputStream;
import java.io.PrintStream;
import java.net.URI;
import java.nio.charset.StandardCharsets;
import java.time.Duration;
import java.time.Instant;
import java.util.Comparator;
import java.util.List;
import org.hl7.fhir.r4.model.Bundle;
import org.hl7.fhir.r4.model.Observation;
import org.hl7.fhir.r4.model.Patient;
import org.hl7.fhir.r4.model.Specimen;
import org.junit.jupiter.api.Test;
import org.lungflag.sandbox.fhirserver.SandboxFhirServer;
import org.lungflag.sandbox.scenario.DemoScenario;

/**
 * The player against the sandbox's own FHIR server: what it posts is the scenario, shifted so that the played part
 * ends now, in clinical order, and playing again updates rather than duplicates.
 */
class ScenarioPlayerTest {

    private final SandboxFhirServer server = SandboxFhirServer.shared();
    private final FhirContext fhir = server.fhirContext();
    private final DemoScenario scenario = DemoScenario.load();
    private final ByteArrayOutputStream output = new ByteArrayOutputStream();
    private final PrintStream out = new PrintStream(output, true, StandardCharsets.UTF_8);

    private IGenericClient client() {
        fhir.getRestfulClientFactory().setServerValidationMode(ServerValidationModeEnum.NEVER);
        return fhir.newRestfulGenericClient(server.baseUrl());
    }

    private List<Observation> observationsOf(String patient) {
        Bundle page = client().search()
                .forResource(Observation.class)
                .where(Observation.SUBJECT.hasId("Patient/" + patient))
                .count(1000)
                .cacheControl(new CacheControlDirective().setNoCache(true))
                .returnBundle(Bundle.class)
                .execute();
        return page.getEntry().stream().map(e -> (Observation) e.getResource()).toList();
    }

    /** The scenario's Observations, all patients, charted no later than the given hour. */
    private List<Observation> scenarioObservationsUpTo(double hours) {
        Instant end = scenario.nominalStart().plusSeconds(Math.round(hours * 3600));
        return scenario.lines("Observation.ndjson").stream()
                .map(line -> fhir.newJsonParser().parseResource(Observation.class, line))
                .filter(o -> !chartedAt(o).isAfter(end))
                .toList();
    }

    private static Instant chartedAt(Observation observation) {
        return observation.getEffectiveDateTimeType().getValue().toInstant();
    }

    private long scenarioObservationsUpTo(String patient, double hours) {
        return scenarioObservationsUpTo(hours).stream()
                .filter(o -> o.getSubject().getReference().equals("Patient/" + patient))
                .count();
    }

    @Test
    void fullSpeedPostsThePlayedHoursShiftedToEndNowAndAgainUpdatesInsteadOfDuplicating() throws Exception {
        ScenarioPlayer player = new ScenarioPlayer(fhir, scenario);
        PlayOptions options = PlayOptions.defaults(URI.create(server.baseUrl()))
                .withSpeed(PlayOptions.FULL_SPEED)
                .withHours(6);
        Instant before = Instant.now();
        PlayResult result = player.play(options, out);
        Instant after = Instant.now();

        // the played part ends "now": its end lies within the play, to the minute
        assertThat(result.clinicalEnd()).isBetween(before.minusSeconds(60), after);
        assertThat(Duration.between(result.clinicalStart(), result.clinicalEnd()))
                .isEqualTo(Duration.ofHours(6));
        assertThat(client().read()
                        .resource(Patient.class)
                        .withId("demo-06")
                        .execute()
                        .getBirthDateElement()
                        .getValueAsString())
                .as("birth dates are dates, not shifted")
                .isEqualTo("2019-08-19");
        List<Observation> posted = observationsOf("demo-01");
        assertThat((long) posted.size()).isEqualTo(scenarioObservationsUpTo("demo-01", 6));
        Instant latest = posted.stream()
                .map(ScenarioPlayerTest::chartedAt)
                .max(Comparator.naturalOrder())
                .orElseThrow();
        assertThat(latest)
                .isBeforeOrEqualTo(result.clinicalEnd())
                .isAfter(result.clinicalEnd().minusSeconds(3600));
        Specimen gas = client().read()
                .resource(Specimen.class)
                .withId("demo-01-gas-01")
                .execute();
        assertThat(gas.getCollection().getCollectedDateTimeType().getValue().toInstant())
                .isBetween(result.clinicalStart(), result.clinicalStart().plusSeconds(3600));
        assertThat(output.toString(StandardCharsets.UTF_8))
                .contains("clinical hour    0")
                .contains("clinical hour    4")
                .contains("Observations posted, advisories raised:")
                .contains("resources posted");

        player.play(options, out);
        assertThat((long) observationsOf("demo-01").size()).isEqualTo(scenarioObservationsUpTo("demo-01", 6));
    }

    /** Clinical time from the first to the last Observation charted up to the given hour, all patients. */
    private Duration pacedSpanUpTo(double hours) {
        List<Instant> times = scenarioObservationsUpTo(hours).stream()
                .map(ScenarioPlayerTest::chartedAt)
                .sorted()
                .toList();
        return Duration.between(times.get(0), times.get(times.size() - 1));
    }

    @Test
    void pacedPlayTakesTheClinicalSpanDividedByTheSpeed() throws Exception {
        // the player waits for each Observation's due time, so the last one is posted no sooner than
        // (last - first charted time) / speed after the start; at 3600 clinical seconds per second that is
        // a few seconds for the first hour (plus the admission hours before hour 0), while the same posts
        // unpaced take well under a second here
        double speed = 3600;
        Duration expected = Duration.ofMillis(Math.round(pacedSpanUpTo(1).toMillis() / speed));
        assertThat(expected).isGreaterThan(Duration.ofSeconds(2));
        PlayOptions options = PlayOptions.defaults(URI.create(server.baseUrl()))
                .withSpeed(speed)
                .withHours(1);
        PlayResult result = new ScenarioPlayer(fhir, scenario).play(options, out);
        // a millisecond either way for the rounding of each due time
        assertThat(result.wallTime()).isGreaterThanOrEqualTo(expected.minusMillis(1));
        assertThat(result.observationsPosted()).isPositive();
    }

    @Test
    void aServerThatIsNotThereIsNamedInTheFailure() {
        PlayOptions options = PlayOptions.defaults(URI.create("http://127.0.0.1:9/fhir"))
                .withSpeed(PlayOptions.FULL_SPEED)
                .withHours(1);
        assertThatThrownBy(() -> new ScenarioPlayer(fhir, scenario).play(options, out))
                .isInstanceOf(PlayException.class)
                .hasMessageContaining("http://127.0.0.1:9/fhir")
                .hasMessageContaining("Patients, Encounters and Specimens");
    }
}
