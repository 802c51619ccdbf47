package org.lungflag.service.normalize;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.parser.DataFormatException;
import java.io.IOException;
import java.io.Reader;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.LinkedHashMap;
import java.util.Map;
import java.util.Optional;
import org.hl7.fhir.r4.model.ConceptMap;
import org.hl7.fhir.r4.model.Enumerations.ConceptMapEquivalence;

/**
 * Loads a site's ConceptMap (the template is in the conformance package) that maps local codes onto the input
 * codes Lungflag knows. Each target must be a code of the built-in {@link CodeMap}; a target Lungflag does not know
 * fails start-up with the file, group and code named, so a mistyped map never silently drops data.
 */
public final class SiteCodeMap {

    private SiteCodeMap() {}

    /** The standard map extended with the site's ConceptMap at {@code file}, if given. */
    public static CodeMap load(FhirContext fhir, CodeMap standard, Optional<Path> file) {
        if (file.isEmpty()) {
            return standard;
        }
        Path path = file.get();
        ConceptMap map;
        try (Reader reader = Files.newBufferedReader(path, StandardCharsets.UTF_8)) {
            map = fhir.newJsonParser().parseResource(ConceptMap.class, reader);
        } catch (IOException e) {
            throw new IllegalStateException(
                    "lungflag.normalize.concept-map: cannot read " + path + ": " + e.getMessage(), e);
        } catch (DataFormatException | ClassCastException e) {
            throw new IllegalStateException(
                    "lungflag.normalize.concept-map: " + path + " is not a FHIR R4 ConceptMap in JSON: "
                            + e.getMessage(),
                    e);
        }
        return standard.with(entries(map, standard, path.toString()));
    }

    static Map<String, CodeMapping> entries(ConceptMap map, CodeMap standard, String where) {
        Map<String, CodeMapping> extra = new LinkedHashMap<>();
        for (int g = 0; g < map.getGroup().size(); g++) {
            ConceptMap.ConceptMapGroupComponent group = map.getGroup().get(g);
            if (!group.hasSource() || !group.hasTarget()) {
                throw new IllegalStateException(where + ": group[" + g + "] needs both source and target systems");
            }
            for (ConceptMap.SourceElementComponent element : group.getElement()) {
                for (ConceptMap.TargetElementComponent target : element.getTarget()) {
                    if (target.getEquivalence() == ConceptMapEquivalence.UNMATCHED
                            || target.getEquivalence() == ConceptMapEquivalence.DISJOINT) {
                        continue;
                    }
                    CodeMapping mapping = standard.lookup(group.getTarget(), target.getCode())
                            .orElseThrow(
                                    () -> new IllegalStateException(where + ": group[" + group.getSource() + "] maps "
                                            + element.getCode() + " to " + group.getTarget() + "|" + target.getCode()
                                            + ", which is not an input code Lungflag knows (see the input ValueSets)"));
                    extra.put(
                            CodeMap.key(group.getSource(), element.getCode()),
                            new CodeMapping(
                                    mapping.kind(),
                                    mapping.role(),
                                    mapping.specimen(),
                                    "site ConceptMap " + map.getUrl() + " → " + target.getCode()));
                }
            }
        }
        return extra;
    }
}
