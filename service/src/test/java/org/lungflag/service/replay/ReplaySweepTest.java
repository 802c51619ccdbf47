package org.lungflag.service.replay;

import static org.assertj.core.api.Assertions.assertThat;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.PrintStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code --sweep} and {@code --params}. The Berlin bands (ARDS Definition Task Force, JAMA 2012, via
 * clinical-reference §2.2 [PUB-2]) are nested: every P/F at or below the mild band's upper bound is in some band, so
 * raising {@code pf_mild_max} can only add evaluations that meet a tier and patients with an advisory; and they need
 * PEEP of at least {@code min_peep}, so raising it above the PEEP charted (10 cmH2O here) removes every P/F
 * advisory. The count of advisories raised (episodes) is not monotone in general (a higher threshold can join two
 * episodes into one), so it is not asserted to be. The data are invented.
 */
class ReplaySweepTest {

    @TempDir
    Path tmp;

    JsonNode run(String... extra) throws IOException {
        Path in = ReplayFixtures.write(
                tmp.resolve("in.ndjson"),
                ReplayFixtures.ndjson(ReplayFixtures.resources(
                        ReplayFixtures.ward(99, 40, "s"), Instant.parse("2026-01-20T06:00:00Z"))));
        Path out = tmp.resolve(
                "out-" + extra.length + "-" + Math.abs(String.join(",", extra).hashCode()));
        List<String> args = new ArrayList<>(List.of("--input", in.toString(), "--out", out.toString()));
        args.addAll(List.of(extra));
        ByteArrayOutputStream err = new ByteArrayOutputStream();
        int exit = ReplayCommand.run(
                args, new PrintStream(err, true, StandardCharsets.UTF_8), false, Duration.ofSeconds(10), 1 << 20);
        assertThat(exit).as(err.toString(StandardCharsets.UTF_8)).isEqualTo(0);
        return new ObjectMapper().readTree(out.resolve("summary.json").toFile());
    }

    @Test
    void raisingTheMildBandsUpperBoundNeverLowersTierMeetingEvaluationsOrPatients() throws IOException {
        JsonNode summary = run("--sweep", "hypoxemia.pf_mild_max=150,200,250,300,350,400");
        JsonNode runs = summary.at("/sweep/runs");
        assertThat(runs).hasSize(6);
        long previousMet = -1;
        long previousPatients = -1;
        for (JsonNode r : runs) {
            long met = r.get("evaluationsMeetingATier").asLong();
            long patients = r.get("patients").asLong();
            assertThat(met).as("tier-meeting evaluations at " + r.get("value")).isGreaterThanOrEqualTo(previousMet);
            assertThat(patients).as("patients at " + r.get("value")).isGreaterThanOrEqualTo(previousPatients);
            previousMet = met;
            previousPatients = patients;
        }
        assertThat(runs.get(5).get("evaluationsMeetingATier").asLong())
                .isGreaterThan(runs.get(0).get("evaluationsMeetingATier").asLong());
        // the default (300, Berlin) row is the catalog's own run
        JsonNode atDefault = runs.get(3);
        JsonNode base = summary.at("/rules/hypoxemia");
        for (String field : List.of("firings", "patients", "evaluationsMeetingATier", "firingsPer100PatientDays")) {
            assertThat(atDefault.get(field)).as(field).isEqualTo(base.get(field));
        }
        assertThat(summary.at("/patients/patientDays").asDouble()).isGreaterThan(0);
        assertThat(Files.readString(tmp.resolve(tmp.toFile().list((d, n) -> n.startsWith("out-"))[0])
                        .resolve("report.html")))
                .contains("hypoxemia.pf_mild_max");
    }

    @Test
    void aMinimumPeepAboveThePeepChartedRemovesEveryPfAdvisory() throws IOException {
        JsonNode runs = run("--sweep", "hypoxemia.min_peep=5,10,10.5,15").at("/sweep/runs");
        assertThat(runs.get(0).get("firings").asLong()).isPositive();
        assertThat(runs.get(1).get("firings")).isEqualTo(runs.get(0).get("firings")); // PEEP 10 >= 10
        assertThat(runs.get(2).get("firings").asLong()).isZero();
        assertThat(runs.get(3).get("firings").asLong()).isZero();
        assertThat(runs.get(2).at("/notEvaluableReasons/peep-below-minimum").asLong())
                .isPositive();
    }

    @Test
    void aParameterFileOverridesTheCatalogDefault() throws IOException {
        Path params = tmp.resolve("params.yaml");
        Files.writeString(params, "hypoxemia:\n  min_peep: 12\n");
        JsonNode summary = run("--params", params.toString());
        assertThat(summary.at("/rules/hypoxemia/firings").asLong()).isZero();
        assertThat(summary.at("/catalog/overrides/hypoxemia.min_peep").asText()).isEqualTo("12.0");
        JsonNode flat =
                run("--params", write("flat.yaml", "hypoxemia.min_peep: 5\n").toString());
        assertThat(flat.at("/rules/hypoxemia/firings").asLong()).isPositive();
    }

    private Path write(String name, String text) throws IOException {
        Path p = tmp.resolve(name);
        Files.writeString(p, text);
        return p;
    }
}
