package org.lungflag.service.reliability.bench;

import static org.assertj.core.api.Assertions.assertThat;

import java.time.Duration;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.lungflag.service.e2e.SandboxServer;

/**
 * Runs {@link HookLoadBenchmark} at a tiny size in the default build, so the benchmark keeps working: everything
 * offered is acknowledged and committed, and the evaluation path evaluated something. No timing is asserted; the
 * figures come from the documented command (README "Reliability and benchmarks").
 */
class HookLoadBenchmarkSmokeTest {

    @Test
    void theBenchmarkRunsAtATinySizeAndCommitsEverythingItOffers() throws Exception {
        HookLoadBenchmark bench = new HookLoadBenchmark(
                new HookLoadBenchmark.Options(
                        SandboxServer.server().baseUrl(),
                        List.of("h2"),
                        new int[] {20, 40},
                        2,
                        20,
                        4,
                        true,
                        Duration.ofSeconds(90),
                        0),
                System.out);
        List<HookLoadBenchmark.Result> results = bench.runAll();
        assertThat(results).singleElement().satisfies(r -> {
            assertThat(r.offered()).isEqualTo(120);
            assertThat(r.committed()).isEqualTo(r.offered());
            assertThat(r.steps()).allSatisfy(s -> {
                assertThat(s.refused()).isZero();
                assertThat(s.acknowledged()).isEqualTo(s.offered());
            });
            // two of the twenty patients reach the moderate band (one in ten) and get a Flag written
            assertThat(r.steps().stream()
                            .mapToInt(HookLoadBenchmark.Step::flags)
                            .sum())
                    .isPositive();
        });
        assertThat(bench.lastEvaluationRate).isPositive();
        assertThat(bench.lastParseRate).isPositive();
    }
}
