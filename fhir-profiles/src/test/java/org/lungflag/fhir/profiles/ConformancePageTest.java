package org.lungflag.fhir.profiles;

import static org.assertj.core.api.Assertions.assertThat;

import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import org.junit.jupiter.api.Test;

/** CONFORMANCE.md is generated from the package; a change to the package without regenerating it fails here. */
class ConformancePageTest {

    static final String REGENERATE =
            "./mvnw -B -q -pl fhir-profiles -am verify -Dtest=ConformancePageTest -Dsurefire.failIfNoSpecifiedTests=false"
                    + " -Dlungflag.conformance.write=true";

    @Test
    void committedConformancePageMatchesThePackage() throws IOException {
        String generated = ConformancePage.render(ConformancePackage.load());
        if (Boolean.getBoolean("lungflag.conformance.write")) {
            Files.writeString(ConformancePage.FILE, generated, StandardCharsets.UTF_8);
        }
        String committed = Files.exists(ConformancePage.FILE)
                ? Files.readString(ConformancePage.FILE, StandardCharsets.UTF_8)
                : "";
        assertThat(committed)
                .as(
                        "fhir-profiles/CONFORMANCE.md is out of date with the package. Regenerate it with:%n  %s%n",
                        REGENERATE)
                .isEqualTo(generated);
    }

    @Test
    void conformancePageListsEveryProfileExtensionAndCode() {
        String page = ConformancePage.render(ConformancePackage.load());
        ConformancePackage pkg = ConformancePackage.load();
        pkg.all(org.hl7.fhir.r4.model.StructureDefinition.class)
                .forEach(sd -> assertThat(page).contains(sd.getUrl()));
        pkg.all(org.hl7.fhir.r4.model.CodeSystem.class)
                .forEach(cs -> cs.getConcept().forEach(c -> assertThat(page).contains("`" + c.getCode() + "`")));
        pkg.all(org.hl7.fhir.r4.model.ValueSet.class)
                .forEach(vs -> assertThat(page).contains(vs.getUrl()));
    }
}
