package org.lungflag.fhir.profiles;

import ca.uhn.fhir.context.FhirContext;
import java.io.IOException;
import java.io.InputStream;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.LinkedHashSet;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import java.util.Set;
import org.hl7.fhir.instance.model.api.IBaseResource;
import org.hl7.fhir.r4.model.CodeSystem;
import org.hl7.fhir.r4.model.MetadataResource;
import org.hl7.fhir.r4.model.Resource;
import org.hl7.fhir.r4.model.StructureDefinition;
import org.hl7.fhir.r4.model.ValueSet;
import org.hl7.fhir.utilities.npm.NpmPackage;

/**
 * The built package exactly as the jar carries it (read from {@link LungflagFhir#PACKAGE_RESOURCE}), parsed once:
 * its resources by file, by canonical URL, and a small expander for the enumerated ValueSets it defines.
 */
final class ConformancePackage {

    static final FhirContext FHIR = FhirContext.forR4Cached();

    private static ConformancePackage instance;

    private final NpmPackage npm;
    private final Map<String, String> packageJson = new LinkedHashMap<>();
    private final Map<String, String> exampleJson = new LinkedHashMap<>();
    private final Map<String, Resource> resources = new LinkedHashMap<>();
    private final Map<String, Resource> examples = new LinkedHashMap<>();
    private final Map<String, MetadataResource> byUrl = new LinkedHashMap<>();

    private ConformancePackage(NpmPackage npm) throws IOException {
        this.npm = npm;
        read("package", packageJson, resources);
        read("example", exampleJson, examples);
        resources.values().stream()
                .filter(MetadataResource.class::isInstance)
                .map(MetadataResource.class::cast)
                .forEach(r -> byUrl.put(r.getUrl(), r));
    }

    static synchronized ConformancePackage load() {
        if (instance == null) {
            try (InputStream in =
                    ConformancePackage.class.getClassLoader().getResourceAsStream(LungflagFhir.PACKAGE_RESOURCE)) {
                if (in == null) {
                    throw new IllegalStateException("No FHIR package on the classpath at "
                            + LungflagFhir.PACKAGE_RESOURCE + "; the build packs it in process-resources");
                }
                instance = new ConformancePackage(NpmPackage.fromPackage(in));
            } catch (IOException e) {
                throw new UncheckedIOException(e);
            }
        }
        return instance;
    }

    private void read(String folder, Map<String, String> json, Map<String, Resource> parsed) throws IOException {
        NpmPackage.NpmPackageFolder f = npm.getFolders().get(folder);
        if (f == null) {
            return;
        }
        for (String file : f.listFiles().stream().sorted().toList()) {
            if (!file.endsWith(".json") || file.equals("package.json")) {
                continue;
            }
            String text = new String(f.fetchFile(file), StandardCharsets.UTF_8);
            json.put(file, text);
            parsed.put(file, (Resource) FHIR.newJsonParser().parseResource(text));
        }
    }

    NpmPackage npm() {
        return npm;
    }

    /** Resources in {@code package/} by file name (conformance resources, the Device, templates). */
    Map<String, Resource> resources() {
        return resources;
    }

    Map<String, String> resourceJson() {
        return packageJson;
    }

    /** Examples in {@code package/example/} by file name. */
    Map<String, Resource> examples() {
        return examples;
    }

    Map<String, String> exampleJson() {
        return exampleJson;
    }

    <T extends Resource> List<T> all(Class<T> type) {
        List<T> out = new ArrayList<>();
        resources.values().stream().filter(type::isInstance).map(type::cast).forEach(out::add);
        return out;
    }

    Optional<MetadataResource> byUrl(String url) {
        return Optional.ofNullable(byUrl.get(url));
    }

    StructureDefinition structureDefinition(String url) {
        return (StructureDefinition) require(url);
    }

    CodeSystem codeSystem(String url) {
        return (CodeSystem) require(url);
    }

    ValueSet valueSet(String url) {
        return (ValueSet) require(url);
    }

    private MetadataResource require(String url) {
        return byUrl(url).orElseThrow(() -> new AssertionError("The package has no resource with url " + url));
    }

    /**
     * The codes of a ValueSet of this package, as {@code system|code}: enumerated concepts, whole Lungflag
     * CodeSystems and included ValueSets, in order, without duplicates. Filters are not used by this package.
     */
    Set<String> expand(String valueSetUrl) {
        Set<String> out = new LinkedHashSet<>();
        for (ValueSet.ConceptSetComponent include :
                valueSet(valueSetUrl).getCompose().getInclude()) {
            if (!include.getFilter().isEmpty()
                    || !valueSet(valueSetUrl).getCompose().getExclude().isEmpty()) {
                throw new IllegalStateException(
                        valueSetUrl + " uses filters or excludes, which this expander does not");
            }
            include.getValueSet().forEach(vs -> out.addAll(expand(vs.getValue())));
            if (include.hasSystem() && include.getConcept().isEmpty()) {
                codeSystem(include.getSystem())
                        .getConcept()
                        .forEach(c -> out.add(include.getSystem() + "|" + c.getCode()));
            }
            include.getConcept().forEach(c -> out.add(include.getSystem() + "|" + c.getCode()));
        }
        return out;
    }

    static String encode(IBaseResource resource) {
        return FHIR.newJsonParser().encodeResourceToString(resource);
    }
}
