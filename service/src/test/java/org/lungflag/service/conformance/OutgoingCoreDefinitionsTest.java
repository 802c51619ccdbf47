package org.lungflag.service.conformance;

import static org.assertj.core.api.Assertions.assertThat;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.validation.FhirValidator;
import java.util.List;
import java.util.Random;
import org.hl7.fhir.common.hapi.validation.validator.FhirInstanceValidator;
import org.hl7.fhir.r4.model.Resource;
import org.junit.jupiter.api.Test;
import org.lungflag.service.offline.Pipelines;

/**
 * The outgoing check with only the core definitions {@link OutgoingCoreDefinitions} keeps must say exactly what it
 * says with all of them (HAPI's own instance-validator module on both sides, so only the definitions differ): every
 * message, of every severity, for the demo's outgoing resources and the broken copies of {@code
 * ReusingInstanceValidatorTest}'s corpus (a required element removed, a code outside its CodeSystem, an unknown
 * extension or profile).
 */
class OutgoingCoreDefinitionsTest {

    private static final FhirContext FHIR = Pipelines.fhirContext();

    @Test
    void theSubsetGivesTheSameMessagesAsAllCoreDefinitions() {
        List<Resource> corpus = ReusingInstanceValidatorTest.corpus(new Random(23));
        FhirValidator all = ConformanceValidator.validatorWithAllCoreDefinitions(FHIR, FhirInstanceValidator::new);
        List<List<String>> expected = corpus.stream()
                .map(r -> ReusingInstanceValidatorTest.messages(all, r))
                .toList();

        var conformancePackage = ConformanceValidator.conformancePackage(FHIR);
        OutgoingCoreDefinitions.Subset subset = OutgoingCoreDefinitions.build(FHIR, conformancePackage);
        FhirValidator trimmed =
                ConformanceValidator.validator(FHIR, conformancePackage, subset.support(), FhirInstanceValidator::new);
        System.out.println("outgoing core definitions kept: " + subset.counts());
        for (int i = 0; i < corpus.size(); i++) {
            Resource r = corpus.get(i);
            assertThat(ReusingInstanceValidatorTest.messages(trimmed, r))
                    .as(i + ": " + r.fhirType() + "/" + r.getIdElement().getIdPart())
                    .isEqualTo(expected.get(i));
        }
        assertThat(expected.stream().filter(ReusingInstanceValidatorTest::hasError))
                .as("resources with errors in the corpus")
                .hasSizeGreaterThan(corpus.size() / 4);
        OutgoingCoreDefinitions.Counts kept = subset.counts();
        assertThat(kept.structureDefinitions())
                .as("core StructureDefinitions kept")
                .isLessThan(kept.coreStructureDefinitions() / 2);
    }
}
