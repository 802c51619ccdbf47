package org.lungflag.fhir.profiles;

import static org.assertj.core.api.Assertions.assertThat;

import ca.uhn.fhir.context.support.ValidationSupportContext;
import java.util.List;
import java.util.Set;
import java.util.TreeSet;
import java.util.stream.Collectors;
import java.util.stream.Stream;
import org.hl7.fhir.common.hapi.validation.support.SnapshotGeneratingValidationSupport;
import org.hl7.fhir.r4.model.Resource;
import org.hl7.fhir.r4.model.StructureDefinition;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.MethodSource;

/**
 * Every example validates against the profile it declares, with no error and no warning outside {@link
 * AcceptedWarnings}; every profile has an example; every resource of the package validates against the core
 * specification.
 */
class ExamplesValidateTest {

    private static final ConformancePackage PKG = ConformancePackage.load();

    static Stream<String> examples() {
        return PKG.examples().keySet().stream();
    }

    static Stream<String> packageResources() {
        // Extension definitions are left out: asked to validate an extension StructureDefinition as a resource,
        // HAPI 8.8 fails to regenerate its snapshot ("Unable to resolve package id hl7.fhir.r4.core#null"). Their
        // snapshots are generated below, and every extension is exercised by the examples that use it.
        return PKG.resources().entrySet().stream()
                .filter(e -> !(e.getValue() instanceof StructureDefinition sd
                        && sd.getType().equals("Extension")))
                .map(java.util.Map.Entry::getKey);
    }

    @ParameterizedTest(name = "{0}")
    @MethodSource("examples")
    void exampleValidatesAgainstItsProfileWithoutErrors(String file) {
        Resource example = PKG.examples().get(file);
        List<String> unexpected = PackageValidator.validate(PKG.exampleJson().get(file)).stream()
                .filter(m -> AcceptedWarnings.isUnexpected(m, example.fhirType(), false))
                .map(PackageValidator::describe)
                .toList();
        assertThat(unexpected).as(file).isEmpty();
    }

    @ParameterizedTest(name = "{0}")
    @MethodSource("packageResources")
    void packageResourceValidatesAgainstTheCoreSpecification(String file) {
        List<String> unexpected = PackageValidator.validate(PKG.resourceJson().get(file)).stream()
                .filter(m -> AcceptedWarnings.isUnexpected(
                        m, PKG.resources().get(file).fhirType(), true))
                .map(PackageValidator::describe)
                .toList();
        assertThat(unexpected).as(file).isEmpty();
    }

    @Test
    void everyExampleDeclaresAProfileOfThisPackageOrIsAPlainCoreResource() {
        Set<String> profiles = profileUrls();
        for (var e : PKG.examples().entrySet()) {
            e.getValue()
                    .getMeta()
                    .getProfile()
                    .forEach(p -> assertThat(profiles)
                            .as(e.getKey() + " declares a profile of this package")
                            .contains(p.getValue()));
        }
    }

    @Test
    void everyProfileHasAtLeastOneExample() {
        Set<String> exemplified = PKG.examples().values().stream()
                .flatMap(r -> r.getMeta().getProfile().stream().map(p -> p.getValue()))
                .collect(Collectors.toSet());
        assertThat(exemplified).containsAll(profileUrls());
    }

    @Test
    void everyExtensionIsUsedByAnExampleOrByThePackage() {
        String everything = String.join("\n", PKG.exampleJson().values())
                + String.join("\n", PKG.resourceJson().values());
        List<String> unused = PKG.all(StructureDefinition.class).stream()
                .filter(sd -> sd.getType().equals("Extension"))
                .map(StructureDefinition::getUrl)
                .filter(url -> !everything.contains("\"url\": \"" + url + "\"")
                        && !everything.contains("\"url\":\"" + url + "\""))
                .toList();
        assertThat(unused).isEmpty();
    }

    @Test
    void everyStructureDefinitionGetsASnapshotCoveringItsDifferential() {
        var chain = PackageValidator.chain();
        for (StructureDefinition sd : PKG.all(StructureDefinition.class)) {
            StructureDefinition copy = sd.copy();
            copy.setSnapshot(null);
            var generated = (StructureDefinition) new SnapshotGeneratingValidationSupport(ConformancePackage.FHIR)
                    .generateSnapshot(new ValidationSupportContext(chain), copy, sd.getUrl(), null, sd.getName());
            Set<String> snapshotIds = generated.getSnapshot().getElement().stream()
                    .map(e -> e.getId())
                    .collect(Collectors.toCollection(TreeSet::new));
            sd.getDifferential()
                    .getElement()
                    .forEach(e -> assertThat(snapshotIds)
                            .as(sd.getUrl() + " snapshot has differential element " + e.getId())
                            .contains(e.getId()));
        }
    }

    private static Set<String> profileUrls() {
        return PKG.all(StructureDefinition.class).stream()
                .filter(sd -> sd.getKind() == StructureDefinition.StructureDefinitionKind.RESOURCE)
                .map(StructureDefinition::getUrl)
                .collect(Collectors.toSet());
    }
}
