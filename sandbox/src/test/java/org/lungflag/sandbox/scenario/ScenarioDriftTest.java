package org.lungflag.sandbox.scenario;

import static org.assertj.core.api.Assertions.assertThat;

import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Map;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The committed scenario is exactly what the generator writes with the default seed, so nobody edits the data by
 * hand and the generator stays the source. On a failure, regenerate (the message says how) and review the diff.
 */
class ScenarioDriftTest {

    static final String REGENERATE = "./mvnw -B -q -pl sandbox -am -DskipTests package && java -jar"
            + " sandbox/target/lungflag-sandbox-exec.jar generate --out sandbox/src/main/resources/scenario";

    @Test
    void theCommittedScenarioIsByteForByteWhatTheSeedGenerates(@TempDir Path dir) throws Exception {
        new ScenarioGenerator().write(ScenarioGenerator.DEFAULT_SEED, dir);
        try (var files = Files.list(dir)) {
            for (Path file : files.sorted().toList()) {
                String name = file.getFileName().toString();
                String generated = Files.readString(file, StandardCharsets.UTF_8);
                assertThat(DemoScenario.read(name))
                        .as("%s differs from what the generator writes; regenerate with: %s", name, REGENERATE)
                        .isEqualTo(generated);
            }
        }
    }

    @Test
    void twoRunsWithTheSameSeedAgreeAndAnotherSeedChangesTheNoiseOnly() {
        ScenarioGenerator generator = new ScenarioGenerator();
        Map<String, String> first = generator.generate(7);
        Map<String, String> again = generator.generate(7);
        Map<String, String> other = generator.generate(8);
        assertThat(again).isEqualTo(first);
        assertThat(other.get("Observation.ndjson")).isNotEqualTo(first.get("Observation.ndjson"));
        assertThat(other.get("Patient.ndjson")).isEqualTo(first.get("Patient.ndjson"));
        assertThat(other.get(ExpectedAdvisories.FILE)).isEqualTo(first.get(ExpectedAdvisories.FILE));
    }

    @Test
    void theExpectationsParseAndNameOnlyScenarioPatients() {
        DemoScenario scenario = DemoScenario.load();
        assertThat(scenario.expectations()).isNotEmpty();
        String patients = String.join("\n", scenario.lines("Patient.ndjson"));
        assertThat(scenario.expectations())
                .allSatisfy(e -> assertThat(patients).contains("\"id\":\"" + e.patient() + "\""));
        assertThat(scenario.lines("Patient.ndjson")).hasSize(8);
    }
}
