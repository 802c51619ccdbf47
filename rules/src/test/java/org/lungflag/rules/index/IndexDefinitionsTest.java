package org.lungflag.rules.index;

import static org.assertj.core.api.Assertions.assertThat;

import java.util.HashSet;
import java.util.List;
import java.util.Set;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.EnumSource;

/** The registry the index catalog and the conformance CodeSystem are built from is complete and self-consistent. */
class IndexDefinitionsTest {

    @ParameterizedTest
    @EnumSource(IndexCode.class)
    void everyIndexCodeHasADocumentedDefinition(IndexCode code) {
        IndexDefinition d = IndexDefinitions.of(code);
        assertThat(d.code()).isEqualTo(code);
        assertThat(d.unit()).isEqualTo(code.unit());
        assertThat(d.formulaText()).isNotBlank();
        assertThat(d.validity()).isNotBlank();
        assertThat(d.inputs()).isNotEmpty();
        assertThat(d.source()).as("source tag of " + code).containsPattern("\\[(PUB-V|PUB-2|CODE-V|MULTI|CP|MEM)");
        assertThat(d.formula().version()).isNotBlank();
        assertThat(IndexCode.fromCode(code.code())).contains(code);
    }

    @Test
    void formulaIdsAreUniqueAndFindable() {
        Set<String> ids = new HashSet<>();
        for (IndexDefinition d : IndexDefinitions.all()) {
            assertThat(ids.add(d.formula().id())).as(d.formula().id()).isTrue();
            assertThat(IndexDefinitions.byFormula(d.formula())).contains(d);
        }
        assertThat(IndexDefinitions.byFormula(new FormulaRef("pf-ratio", "999")))
                .isEmpty();
    }

    @Test
    void theAlveolarGasFormIsASiteChoice() {
        SiteParameters full = SiteParameters.defaults().withAlveolarGasForm(AlveolarGasForm.FULL);
        assertThat(IndexDefinitions.of(IndexCode.ALVEOLAR_OXYGEN))
                .isEqualTo(IndexDefinitions.ALVEOLAR_OXYGEN_SIMPLIFIED);
        assertThat(IndexDefinitions.of(IndexCode.AA_GRADIENT, full)).isEqualTo(IndexDefinitions.AA_GRADIENT_FULL);
        List<IndexDefinition> forSite = IndexDefinitions.forSite(full);
        assertThat(forSite).extracting(IndexDefinition::code).containsExactly(IndexCode.values());
        assertThat(forSite).contains(IndexDefinitions.ARTERIAL_ALVEOLAR_RATIO_FULL);
    }

    @Test
    void theMechanicalPowerDefinitionStatesItsValidity() {
        assertThat(IndexDefinitions.of(IndexCode.MECHANICAL_POWER).validity())
                .contains("volume-controlled")
                .contains("constant");
    }

    @Test
    void siteParameterDefaultsNameTheirSources() {
        assertThat(SiteParameters.DEFAULTS)
                .allSatisfy(d -> assertThat(d.source()).contains("§"));
        SiteParameters d = SiteParameters.defaults();
        assertThat(d.waterVapourPressureMmHg()).isEqualTo(47);
        assertThat(d.respiratoryQuotient()).isEqualTo(0.8);
        assertThat(d.hufnerConstant()).isEqualTo(1.34);
        assertThat(d.hasBarometricPressure()).isFalse();
    }

    @Test
    void numbersInNotesAreShortAndLocaleIndependent() {
        assertThat(IndexCalculator.number(760)).isEqualTo("760");
        assertThat(IndexCalculator.number(0.8)).isEqualTo("0.8");
        assertThat(IndexCalculator.number(70.56600000001)).isEqualTo("70.566");
        assertThat(IndexCalculator.number(0.00001)).isEqualTo("1.000e-05");
        assertThat(IndexCalculator.number(-12.5)).isEqualTo("-12.5");
    }
}
