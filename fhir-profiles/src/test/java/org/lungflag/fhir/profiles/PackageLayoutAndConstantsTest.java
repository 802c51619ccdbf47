package org.lungflag.fhir.profiles;

import static org.assertj.core.api.Assertions.assertThat;

import java.lang.reflect.Field;
import java.lang.reflect.Modifier;
import java.util.ArrayList;
import java.util.List;
import org.hl7.fhir.utilities.npm.NpmPackage;
import org.junit.jupiter.api.Test;

/** The jar carries a standard FHIR NPM package at the documented place, and every constant points at its content. */
class PackageLayoutAndConstantsTest {

    private static final ConformancePackage PKG = ConformancePackage.load();

    @Test
    void packageJsonNamesTheR4CoreDependency() {
        NpmPackage npm = PKG.npm();
        assertThat(npm.name()).isEqualTo(LungflagFhir.PACKAGE_ID);
        assertThat(npm.fhirVersion()).isEqualTo(LungflagFhir.FHIR_VERSION);
        assertThat(npm.dependencies()).containsExactly("hl7.fhir.r4.core#4.0.1");
        assertThat(npm.version()).doesNotContain("@");
    }

    @Test
    void everyCanonicalUrlConstantNamesAResourceOfThePackage() throws IllegalAccessException {
        List<String> urls = new ArrayList<>();
        for (Class<?> nested : List.of(
                LungflagFhir.Profiles.class,
                LungflagFhir.Extensions.class,
                LungflagFhir.CodeSystems.class,
                LungflagFhir.ValueSets.class)) {
            for (Field f : nested.getFields()) {
                if (Modifier.isStatic(f.getModifiers()) && f.getType() == String.class) {
                    String value = (String) f.get(null);
                    if (value.startsWith(LungflagFhir.CANONICAL_BASE)
                            && !f.getName().endsWith("_PREFIX")) {
                        urls.add(value);
                    }
                }
            }
        }
        assertThat(urls)
                .hasSizeGreaterThan(30)
                .allSatisfy(url -> assertThat(PKG.byUrl(url)).as(url).isPresent());
    }

    @Test
    void everyPackageFileConstantNamesAFileOfThePackage() throws IllegalAccessException {
        for (Field f : LungflagFhir.PackageFiles.class.getFields()) {
            String file = (String) f.get(null);
            assertThat(PKG.resources()).as(f.getName()).containsKey(file);
        }
    }

    @Test
    void everyCanonicalResourceCarriesTheBuildVersion() {
        PKG.resources().values().stream()
                .filter(org.hl7.fhir.r4.model.MetadataResource.class::isInstance)
                .map(org.hl7.fhir.r4.model.MetadataResource.class::cast)
                .forEach(r -> assertThat(r.getVersion())
                        .as(r.getUrl())
                        .isEqualTo(PKG.npm().version()));
    }

    @Test
    void rulePolicyIsTheRuleCanonicalAndVersion() {
        assertThat(LungflagFhir.rulePolicy("berlin-oxygenation-band", "1"))
                .isEqualTo("http://lungflag.org/fhir/rule/berlin-oxygenation-band|1");
    }
}
