package org.lungflag.fhir.profiles;

import static org.assertj.core.api.Assertions.assertThat;

import java.util.Arrays;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Optional;
import java.util.function.Function;
import java.util.stream.Collectors;
import org.hl7.fhir.r4.model.CodeSystem;
import org.hl7.fhir.r4.model.CodeSystem.ConceptDefinitionComponent;
import org.hl7.fhir.r4.model.Coding;
import org.junit.jupiter.api.Test;
import org.lungflag.rules.catalog.RuleCatalog;
import org.lungflag.rules.catalog.RuleDefinition;
import org.lungflag.rules.catalog.Tier;
import org.lungflag.rules.index.IndexCode;
import org.lungflag.rules.measure.BodyPosition;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.SupportMode;
import org.lungflag.rules.measure.ValueRole;
import org.lungflag.rules.quality.DataQualityReason;

/**
 * The CodeSystems that mirror the rules core stay identical to it, both ways: a constant added to an enum without
 * its concept here (or the reverse) fails this test.
 */
class CodeSystemsMatchTheRulesCoreTest {

    private static final ConformancePackage PKG = ConformancePackage.load();

    /**
     * design.md, "Codes": the advisory codes. The rule catalog is being written on another branch; once it lands,
     * compare with the advisory codes of {@code org.lungflag.rules.catalog.RuleCatalog.loadDefault()} instead.
     */
    private static final List<String> DESIGN_ADVISORY_CODES = List.of(
            "hypoxemia-mild",
            "hypoxemia-moderate",
            "hypoxemia-severe",
            "dead-space-rising",
            "prone-criteria-met",
            "tidal-volume-high",
            "plateau-pressure-high",
            "driving-pressure-high",
            "pediatric-hypoxemia-mild-moderate",
            "pediatric-hypoxemia-severe");

    @Test
    void indexCodeSystemEqualsIndexCodeWithDisplayUnitAndLoinc() {
        Map<String, ConceptDefinitionComponent> concepts = concepts(LungflagFhir.CodeSystems.INDEX);
        assertThat(concepts.keySet())
                .containsExactlyElementsOf(
                        Arrays.stream(IndexCode.values()).map(IndexCode::code).toList());
        for (IndexCode code : IndexCode.values()) {
            ConceptDefinitionComponent c = concepts.get(code.code());
            assertThat(c.getDisplay()).as(code.code()).isEqualTo(code.display());
            assertThat(property(c, "unit").map(p -> p.getValueStringType().getValue()))
                    .as(code.code() + " unit")
                    .contains(code.unit());
            assertThat(property(c, "loinc").map(p -> ((Coding) p.getValue()).getCode()))
                    .as(code.code() + " LOINC")
                    .isEqualTo(code.loinc());
        }
    }

    @Test
    void everyIndexConceptHasADefinitionAFormulaAndASource() {
        concepts(LungflagFhir.CodeSystems.INDEX).values().forEach(c -> {
            assertThat(c.getDefinition()).as(c.getCode()).isNotBlank();
            assertThat(property(c, "formula")).as(c.getCode() + " formula").isPresent();
            assertThat(property(c, "source")).as(c.getCode() + " source").isPresent();
        });
    }

    @Test
    void dataQualityCodeSystemEqualsDataQualityReasonWithDisplayDefinitionAndUse() {
        Map<String, ConceptDefinitionComponent> concepts = concepts(LungflagFhir.CodeSystems.DATA_QUALITY);
        assertThat(concepts.keySet())
                .containsExactlyElementsOf(Arrays.stream(DataQualityReason.values())
                        .map(DataQualityReason::code)
                        .toList());
        for (DataQualityReason reason : DataQualityReason.values()) {
            ConceptDefinitionComponent c = concepts.get(reason.code());
            assertThat(c.getDisplay()).as(reason.code()).isEqualTo(reason.display());
            assertThat(c.getDefinition()).as(reason.code()).isEqualTo(reason.definition());
            assertThat(property(c, "use").map(p -> p.getValueCodeType().getValue()))
                    .as(reason.code() + " use")
                    .contains(kebab(reason.use()));
        }
    }

    @Test
    void notEvaluableReasonValueSetListsExactlyTheNotEvaluableReasons() {
        assertThat(PKG.expand(LungflagFhir.ValueSets.NOT_EVALUABLE_REASON))
                .containsExactlyElementsOf(Arrays.stream(DataQualityReason.values())
                        .filter(r -> r.use() == DataQualityReason.Use.NOT_EVALUABLE)
                        .map(r -> LungflagFhir.CodeSystems.DATA_QUALITY + "|" + r.code())
                        .toList());
    }

    @Test
    void everyNotEvaluableReasonNamesACoreDataAbsentReason() {
        List<String> coreCodes = List.of("unknown", "not-applicable", "error");
        concepts(LungflagFhir.CodeSystems.DATA_QUALITY).values().stream()
                .filter(c -> property(c, "use")
                        .orElseThrow()
                        .getValueCodeType()
                        .getValue()
                        .equals("not-evaluable"))
                .forEach(c -> assertThat(property(c, "data-absent-reason")
                                .map(p -> p.getValueCodeType().getValue()))
                        .as(c.getCode())
                        .hasValueSatisfying(v -> assertThat(coreCodes).contains(v)));
    }

    @Test
    void advisoryCodeSystemEqualsTheAdvisoryCodesOfTheDesign() {
        assertThat(concepts(LungflagFhir.CodeSystems.ADVISORY).keySet())
                .containsExactlyElementsOf(DESIGN_ADVISORY_CODES);
    }

    @Test
    void everyAdvisoryCodeIsATierOfExactlyOneCatalogRuleAndViceVersa() {
        RuleCatalog catalog = RuleCatalog.loadDefault();
        Map<String, String> ruleOfTier = new java.util.TreeMap<>();
        for (RuleDefinition rule : catalog.rules()) {
            for (Tier tier : rule.tiers()) {
                assertThat(ruleOfTier.put(tier.code(), rule.id()))
                        .as("tier " + tier.code() + " is used by more than one rule")
                        .isNull();
            }
        }
        assertThat(ruleOfTier.keySet())
                .containsExactlyInAnyOrderElementsOf(
                        concepts(LungflagFhir.CodeSystems.ADVISORY).keySet());
    }

    @Test
    void everyAdvisoryDisplayMatchesTheCatalogTierDisplay() {
        RuleCatalog catalog = RuleCatalog.loadDefault();
        Map<String, ConceptDefinitionComponent> concepts = concepts(LungflagFhir.CodeSystems.ADVISORY);
        for (RuleDefinition rule : catalog.rules()) {
            for (Tier tier : rule.tiers()) {
                assertThat(concepts.get(tier.code()).getDisplay())
                        .as(tier.code())
                        .isNotBlank();
            }
        }
    }

    @Test
    void everyAdvisoryConceptHasADefinitionACriterionASourceAndAPopulation() {
        concepts(LungflagFhir.CodeSystems.ADVISORY).values().forEach(c -> {
            assertThat(c.getDisplay()).as(c.getCode()).isNotBlank();
            assertThat(c.getDefinition()).as(c.getCode()).isNotBlank();
            assertThat(property(c, "criterion")).as(c.getCode() + " criterion").isPresent();
            assertThat(property(c, "source")).as(c.getCode() + " source").isPresent();
            assertThat(property(c, "population").map(p -> p.getValueCodeType().getValue()))
                    .as(c.getCode() + " population")
                    .contains(c.getCode().startsWith("pediatric-") ? "pediatric" : "adult");
        });
    }

    @Test
    void inputKindCodeSystemEqualsQuantityKind() {
        assertCodesAre(LungflagFhir.CodeSystems.INPUT_KIND, QuantityKind.values());
    }

    @Test
    void respiratorySupportCodeSystemEqualsSupportMode() {
        assertCodesAre(LungflagFhir.CodeSystems.RESPIRATORY_SUPPORT, SupportMode.values());
    }

    @Test
    void bodyPositionCodeSystemEqualsBodyPosition() {
        assertCodesAre(LungflagFhir.CodeSystems.BODY_POSITION, BodyPosition.values());
    }

    @Test
    void valueRoleCodeSystemEqualsValueRole() {
        assertCodesAre(LungflagFhir.CodeSystems.VALUE_ROLE, ValueRole.values());
    }

    @Test
    void specimenKindCodeSystemEqualsSpecimenKind() {
        assertCodesAre(LungflagFhir.CodeSystems.SPECIMEN_KIND, SpecimenKind.values());
    }

    @Test
    void everyCodeSystemCountsItsConceptsAndDefinesEachOne() {
        for (CodeSystem cs : PKG.all(CodeSystem.class)) {
            assertThat(cs.getCount()).as(cs.getUrl()).isEqualTo(cs.getConcept().size());
            assertThat(cs.getConcept())
                    .allSatisfy(
                            c -> assertThat(c.getDefinition()).as(c.getCode()).isNotBlank());
        }
    }

    /** Enum constant to code: lower case, underscores become hyphens (e.g. TIDAL_VOLUME to tidal-volume). */
    static String kebab(Enum<?> constant) {
        return constant.name().toLowerCase(Locale.ROOT).replace('_', '-');
    }

    private static void assertCodesAre(String codeSystemUrl, Enum<?>[] constants) {
        assertThat(concepts(codeSystemUrl).keySet())
                .containsExactlyElementsOf(Arrays.stream(constants)
                        .map(CodeSystemsMatchTheRulesCoreTest::kebab)
                        .toList());
    }

    private static Map<String, ConceptDefinitionComponent> concepts(String url) {
        return PKG.codeSystem(url).getConcept().stream()
                .collect(Collectors.toMap(
                        ConceptDefinitionComponent::getCode,
                        Function.identity(),
                        (a, b) -> {
                            throw new AssertionError("duplicate code " + a.getCode() + " in " + url);
                        },
                        java.util.LinkedHashMap::new));
    }

    private static Optional<CodeSystem.ConceptPropertyComponent> property(ConceptDefinitionComponent c, String code) {
        return c.getProperty().stream().filter(p -> p.getCode().equals(code)).findFirst();
    }
}
