package org.lungflag.fhir.profiles;

import static org.assertj.core.api.Assertions.assertThat;

import java.io.IOException;
import java.io.InputStream;
import java.nio.charset.StandardCharsets;
import java.util.List;
import java.util.stream.Stream;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.Arguments;
import org.junit.jupiter.params.provider.MethodSource;

/**
 * Each file in {@code src/test/resources/invalid/} is a valid example with one thing broken. The validator must
 * reject it with an error that names what was wrong.
 */
class InvalidExamplesAreRejectedTest {

    static Stream<Arguments> invalidExamples() {
        return Stream.of(
                // advisory Flag
                Arguments.of(
                        "Flag-missing-caution.json",
                        "Slice 'Flag.extension:caution' for extension 'http://lungflag.org/fhir/StructureDefinition/advisory-caution': a matching slice is required, but not found"),
                Arguments.of(
                        "Flag-missing-flag-detail.json",
                        "Slice 'Flag.extension:detail' for extension 'http://hl7.org/fhir/StructureDefinition/flag-detail': a matching slice is required, but not found"),
                Arguments.of(
                        "Flag-wrong-code-system.json",
                        "None of the codings provided are in the value set 'Lungflag advisories'"),
                Arguments.of("Flag-wrong-code-system.json", "lf-flag-1"),
                Arguments.of("Flag-unknown-advisory-code.json", "hypoxemia-critical"),
                Arguments.of("Flag-author-not-device.json", "Practitioner"),
                Arguments.of("Flag-missing-identifier.json", "Flag.identifier: minimum required = 1, but only found 0"),
                Arguments.of("Flag-rule-without-digest.json", "digest"),
                // derived-index Observation
                Arguments.of("Observation-not-evaluable-without-reason.json", "lf-obs-1"),
                Arguments.of("Observation-derived-value-and-absent-reason.json", "lf-obs-1"),
                Arguments.of("Observation-not-evaluable-with-refusal-reason.json", "malformed-resource"),
                Arguments.of("Observation-not-evaluable-without-lungflag-reason.json", "dataAbsentReason.coding"),
                Arguments.of("Observation-derived-method-not-id-at-version.json", "lf-obs-3"),
                Arguments.of("Observation-derived-pf-without-loinc.json", "lf-obs-2"),
                Arguments.of(
                        "Observation-derived-without-inputs.json",
                        "Observation.derivedFrom: minimum required = 1, but only found 0"),
                Arguments.of("Observation-derived-value-without-ucum.json", "Observation.value"),
                // Provenance
                Arguments.of("Provenance-unversioned-target.json", "lf-prov-1"),
                Arguments.of("Provenance-policy-without-version.json", "lf-prov-2"),
                Arguments.of("Provenance-unversioned-input.json", "lf-prov-3"),
                Arguments.of("Provenance-input-not-derivation.json", "derivation"),
                // input profiles
                Arguments.of("Observation-spo2-coded-only-2708-6-as-laboratory.json", "lf-spo2-1"),
                Arguments.of(
                        "Observation-blood-gas-without-specimen.json",
                        "Observation.specimen: minimum required = 1, but only found 0"),
                Arguments.of(
                        "Observation-blood-gas-venous-code.json",
                        "None of the codings provided are in the value set 'Arterial blood-gas codes'"),
                Arguments.of("Observation-blood-gas-preliminary.json", "lf-in-1"),
                Arguments.of("Specimen-venous-as-arterial.json", "122552005"),
                Arguments.of("Observation-body-height-in-kilograms.json", "lf-body-1"),
                Arguments.of("ConceptMap-site-map-targets-loinc.json", "lf-map-1"),
                Arguments.of("ConceptMap-site-map-wider-mapping.json", "lf-map-2"));
    }

    @ParameterizedTest(name = "{0} is rejected with \"{1}\"")
    @MethodSource("invalidExamples")
    void invalidExampleIsRejectedWithTheExpectedMessage(String file, String expected) throws IOException {
        List<String> errors = PackageValidator.validate(read(file)).stream()
                .filter(PackageValidator::isError)
                .map(PackageValidator::describe)
                .toList();
        assertThat(errors).as(file).anySatisfy(e -> assertThat(e).contains(expected));
    }

    private static String read(String file) throws IOException {
        try (InputStream in = InvalidExamplesAreRejectedTest.class.getResourceAsStream("/invalid/" + file)) {
            assertThat(in).as("test resource invalid/" + file).isNotNull();
            return new String(in.readAllBytes(), StandardCharsets.UTF_8);
        }
    }
}
