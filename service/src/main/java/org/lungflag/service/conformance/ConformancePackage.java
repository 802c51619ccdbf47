package org.lungflag.service.conformance;

import ca.uhn.fhir.context.FhirContext;
import java.io.IOException;
import java.io.InputStream;
import java.io.UncheckedIOException;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import org.hl7.fhir.r4.model.Resource;
import org.hl7.fhir.r4.model.ValueSet;
import org.hl7.fhir.utilities.npm.NpmPackage;
import org.lungflag.fhir.profiles.LungflagFhir;

/**
 * Lungflag's own FHIR conformance package as the jar carries it, parsed once: the input ValueSets the service
 * reads its codes from, the software Device, the Subscription templates. The package is the contract; the service
 * takes its input codes from it rather than keeping a second list.
 */
public final class ConformancePackage {

    private final NpmPackage npm;
    private final Map<String, Resource> byFile = new LinkedHashMap<>();

    private ConformancePackage(NpmPackage npm, FhirContext fhir) throws IOException {
        this.npm = npm;
        for (String file : npm.list("package")) {
            if (!file.endsWith(".json") || file.equals("package.json") || file.startsWith(".")) {
                continue;
            }
            try (InputStream in = npm.load("package", file)) {
                byFile.put(file, (Resource) fhir.newJsonParser().parseResource(in));
            }
        }
    }

    /** Loads the package from the classpath. */
    public static ConformancePackage load(FhirContext fhir) {
        try (InputStream in =
                ConformancePackage.class.getClassLoader().getResourceAsStream(LungflagFhir.PACKAGE_RESOURCE)) {
            if (in == null) {
                throw new IllegalStateException("the conformance package is missing from the classpath ("
                        + LungflagFhir.PACKAGE_RESOURCE + "); is lungflag-fhir-profiles on the classpath?");
            }
            return new ConformancePackage(NpmPackage.fromPackage(in), fhir);
        } catch (IOException e) {
            throw new UncheckedIOException("cannot read the conformance package", e);
        }
    }

    public String version() {
        return npm.version();
    }

    /** A resource of the package by file name, e.g. {@code Device-lungflag.json}. */
    public <T extends Resource> T resource(String file, Class<T> type) {
        Resource r = byFile.get(file);
        if (r == null) {
            throw new IllegalStateException("the conformance package has no " + file);
        }
        return type.cast(r.copy());
    }

    /** The input ValueSets ({@code ValueSet/input-<kind>}), one per quantity kind. */
    public List<ValueSet> inputValueSets() {
        List<ValueSet> out = new ArrayList<>();
        for (Resource r : byFile.values()) {
            if (r instanceof ValueSet vs
                    && vs.getUrl().startsWith(LungflagFhir.ValueSets.INPUT_PREFIX)
                    && vs.getExtensionByUrl(LungflagFhir.Extensions.INPUT_KIND) != null) {
                out.add(vs);
            }
        }
        return out;
    }

    public Optional<Resource> byUrl(String url) {
        for (Resource r : byFile.values()) {
            if (r instanceof org.hl7.fhir.r4.model.MetadataResource m && url.equals(m.getUrl())) {
                return Optional.of(r);
            }
        }
        return Optional.empty();
    }
}
