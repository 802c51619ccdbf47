package org.lungflag.rules.engine;

import static org.assertj.core.api.Assertions.assertThat;

import java.io.IOException;
import java.nio.file.Files;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.Set;
import org.junit.jupiter.api.Test;
import org.lungflag.rules.catalog.AdvisoryCodes;
import org.lungflag.rules.catalog.ParameterDefinition;
import org.lungflag.rules.catalog.RuleCatalog;
import org.lungflag.rules.catalog.RuleDefinition;
import org.lungflag.rules.catalog.RuleSource;
import org.lungflag.rules.catalog.SourceTag;
import org.lungflag.rules.catalog.Tier;

/** The default catalog is complete: tested both ways, every parameter sourced and described, every code used once. */
class CatalogCompletenessTest {

    static final RuleCatalog CATALOG = RuleCatalog.loadDefault();
    static final Set<String> FIRING = Set.of("ONSET", "ONGOING", "ESCALATED", "DE_ESCALATED");
    static final Set<String> NON_FIRING = Set.of("NOT_MET", "NOT_EVALUABLE", "NONE");

    @Test
    void every_rule_has_a_folder_with_tests_and_readme_and_at_least_one_firing_and_one_non_firing_case()
            throws IOException {
        Map<String, RuleCases> byRule = new HashMap<>();
        for (RuleCases rc : CatalogCasesTest.allCases()) {
            byRule.put(rc.rule(), rc);
        }
        for (RuleDefinition rule : CATALOG.rules()) {
            assertThat(Files.isRegularFile(
                            CatalogCasesTest.CATALOG.resolve(rule.id()).resolve("README.md")))
                    .as("%s has a README.md", rule.id())
                    .isTrue();
            RuleCases rc = byRule.get(rule.id());
            assertThat(rc).as("%s has a tests.yaml", rule.id()).isNotNull();
            List<String> outcomes = rc.cases().stream()
                    .flatMap(c -> c.expect().stream())
                    .map(RuleCases.Expectation::outcome)
                    .toList();
            assertThat(outcomes).as("%s has a firing case", rule.id()).anyMatch(FIRING::contains);
            assertThat(outcomes).as("%s has a non-firing case", rule.id()).anyMatch(NON_FIRING::contains);
            assertThat(rc.cases())
                    .as("%s names a source for every case", rule.id())
                    .allSatisfy(c -> assertThat(c.source()).isNotBlank());
        }
        assertThat(byRule.keySet())
                .as("every tests.yaml belongs to a rule")
                .containsExactlyInAnyOrderElementsOf(
                        CATALOG.rules().stream().map(RuleDefinition::id).toList());
    }

    @Test
    void every_tier_uses_a_design_advisory_code_and_each_code_is_used_by_exactly_one_rule() {
        Map<String, String> owners = new HashMap<>();
        for (RuleDefinition rule : CATALOG.rules()) {
            for (Tier t : rule.tiers()) {
                assertThat(AdvisoryCodes.ALL).contains(t.code());
                assertThat(owners.put(t.code(), rule.id()))
                        .as("%s used by one rule", t.code())
                        .isNull();
            }
        }
        assertThat(owners.keySet()).containsExactlyInAnyOrderElementsOf(AdvisoryCodes.ALL);
    }

    @Test
    void every_parameter_has_a_description_and_an_existing_source_and_every_source_a_citation() {
        for (RuleDefinition rule : CATALOG.rules()) {
            for (ParameterDefinition p : rule.parameters()) {
                assertThat(p.description())
                        .as("%s.%s description", rule.id(), p.name())
                        .isNotBlank();
                assertThat(rule.source(p.source()))
                        .as("%s.%s source %s", rule.id(), p.name(), p.source())
                        .isPresent();
            }
            for (RuleSource s : rule.sources()) {
                assertThat(s.citation())
                        .as("%s source %s citation", rule.id(), s.id())
                        .isNotBlank();
                assertThat(s.supports())
                        .as("%s source %s says what it supports", rule.id(), s.id())
                        .isNotBlank();
            }
        }
    }

    @Test
    void thresholds_without_a_published_source_say_rule_of_thumb_in_the_caution_or_readme() throws IOException {
        for (RuleDefinition rule : CATALOG.rules()) {
            String readme =
                    Files.readString(CatalogCasesTest.CATALOG.resolve(rule.id()).resolve("README.md"));
            boolean ruleOfThumb = rule.sources().stream().anyMatch(s -> s.tag() == SourceTag.RULE_OF_THUMB);
            if (ruleOfThumb) {
                assertThat(readme)
                        .as("%s README labels its rules of thumb", rule.id())
                        .contains("validate locally");
            }
            boolean unverified = rule.sources().stream().anyMatch(s -> s.tag() == SourceTag.UNVERIFIED);
            if (unverified) {
                assertThat(readme)
                        .as("%s README says what was verified", rule.id())
                        .contains("verified");
            }
        }
    }

    @Test
    void no_advisory_text_words_a_result_as_a_diagnosis() {
        for (RuleDefinition rule : CATALOG.rules()) {
            String text = (rule.logic().advisory().text() + " " + rule.caution() + " "
                            + rule.tiers().stream().map(Tier::display).toList())
                    .toLowerCase(java.util.Locale.ROOT);
            assertThat(text).as(rule.id()).doesNotContain("has ards").doesNotContain("patient has");
        }
    }
}
