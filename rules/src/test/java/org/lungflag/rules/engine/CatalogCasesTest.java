package org.lungflag.rules.engine;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.fail;

import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.stream.Collectors;
import java.util.stream.Stream;
import org.junit.jupiter.api.DynamicContainer;
import org.junit.jupiter.api.DynamicTest;
import org.junit.jupiter.api.TestFactory;
import org.lungflag.rules.catalog.ParameterOverrides;
import org.lungflag.rules.catalog.RuleCatalog;

/**
 * Runs every rule's {@code tests.yaml} through the real engine: the default catalog from the classpath, the real
 * index calculator and the per-patient evaluator. Each case's expected values name their published source.
 */
class CatalogCasesTest {

    static final Path CATALOG = Path.of("catalog");
    static final RuleEngine ENGINE = RuleEngine.create(RuleCatalog.loadDefault(), ParameterOverrides.none());

    static List<RuleCases> allCases() throws IOException {
        try (Stream<Path> dirs = Files.list(CATALOG)) {
            return dirs.filter(Files::isDirectory)
                    .sorted()
                    .map(d -> RuleCases.read(d.resolve("tests.yaml")))
                    .toList();
        }
    }

    @TestFactory
    Stream<DynamicContainer> every_rule_gives_the_outcomes_its_tests_yaml_expects() throws IOException {
        return allCases().stream()
                .map(rc -> DynamicContainer.dynamicContainer(
                        rc.rule(),
                        rc.cases().stream().map(c -> DynamicTest.dynamicTest(c.name(), () -> check(rc.rule(), c)))));
    }

    static void check(String ruleId, RuleCases.Case c) {
        CaseRunner.Run run = CaseRunner.run(ENGINE, c);
        List<RuleEvaluation> evals = run.forRule(ruleId);
        String context = "case '" + c.name() + "' (" + c.source() + ")\n" + describe(evals);
        for (RuleCases.Expectation e : c.expect()) {
            List<RuleEvaluation> at =
                    evals.stream().filter(x -> x.at().equals(e.at())).toList();
            if (e.outcome().equals("NONE")) {
                assertThat(at)
                        .as("no evaluation expected at %s in %s", e.at(), context)
                        .isEmpty();
                continue;
            }
            RuleEvaluation match = at.stream()
                    .filter(x -> x.outcome().name().equals(e.outcome()))
                    .findFirst()
                    .orElse(null);
            if (match == null) {
                fail("expected " + e.outcome() + " at " + e.at() + " in " + context);
            }
            if (e.tier() != null) {
                assertThat(match.tier()).as("tier at %s in %s", e.at(), context).isEqualTo(e.tier());
            }
            if (e.reason() != null) {
                assertThat(match.reason())
                        .as("reason at %s in %s", e.at(), context)
                        .isEqualTo(e.reason());
            }
            if (e.basisContains() != null) {
                assertThat(match.explanation().basisText())
                        .as("basis at %s in %s", e.at(), context)
                        .contains(e.basisContains());
            }
            if (e.cautionContains() != null) {
                assertThat(match.explanation().cautionText())
                        .as("caution at %s in %s", e.at(), context)
                        .contains(e.cautionContains());
            }
            if (e.advisoryContains() != null) {
                assertThat(match.explanation().advisoryText())
                        .as("advisory at %s in %s", e.at(), context)
                        .contains(e.advisoryContains());
            }
        }
        if (c.episodes() != null) {
            List<Episode> episodes = run.episodesForRule(ruleId);
            assertThat(episodes)
                    .as("episodes in %s", context)
                    .hasSize(c.episodes().size());
            for (int i = 0; i < episodes.size(); i++) {
                Episode got = episodes.get(i);
                RuleCases.EpisodeExpectation want = c.episodes().get(i);
                assertThat(got.start()).as("episode %d start in %s", i, context).isEqualTo(want.start());
                assertThat(got.status().name())
                        .as("episode %d status in %s", i, context)
                        .isEqualTo(want.status());
                if (want.end() != null) {
                    assertThat(got.end()).as("episode %d end in %s", i, context).isEqualTo(want.end());
                }
                if (!want.tiers().isEmpty()) {
                    assertThat(got.tierHistory().stream().map(TierChange::tier).toList())
                            .as("episode %d tiers in %s", i, context)
                            .isEqualTo(want.tiers());
                }
            }
        }
    }

    static String describe(List<RuleEvaluation> evals) {
        return evals.stream()
                .map(e -> "  " + e.at() + " " + e.outcome() + (e.tier() == null ? "" : " " + e.tier())
                        + (e.reason() == null ? "" : " " + e.reason().code()) + " | " + e.detail() + " | "
                        + e.explanation().basisText())
                .collect(Collectors.joining("\n"));
    }
}
