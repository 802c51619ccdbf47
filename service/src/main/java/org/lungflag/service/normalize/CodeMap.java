package org.lungflag.service.normalize;

import static org.lungflag.rules.measure.SpecimenKind.NOT_APPLICABLE;
import static org.lungflag.rules.measure.SpecimenKind.UNKNOWN;
import static org.lungflag.rules.measure.ValueRole.MEASUREMENT;
import static org.lungflag.rules.measure.ValueRole.SETTING;

import java.util.Collections;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import org.hl7.fhir.r4.model.ValueSet;
import org.lungflag.fhir.profiles.LungflagFhir;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.ValueRole;
import org.lungflag.service.conformance.ConformancePackage;

/**
 * The input codes Lungflag understands: exactly the codes of the conformance package's input ValueSets (LOINC and
 * IEEE 11073 MDC codes that clinical-reference §11 marks verified, plus Lungflag's interim input-kind codes where
 * no standard code exists). Sites add their local codes with a ConceptMap ({@link SiteCodeMap}). Codes that could
 * not be verified are left out on purpose (fhir-profiles/REVIEW.md lists them) and can be added per site.
 */
public final class CodeMap {

    public static final String LOINC = "http://loinc.org";
    public static final String MDC = "urn:iso:std:iso:11073:10101";
    /** Lungflag's interim input codes where no verified standard code exists (mixed-expired PCO2, ...). */
    public static final String LUNGFLAG_INPUT = LungflagFhir.CodeSystems.INPUT_KIND;

    /** LOINC 59408-5 and MDC 150456 mark pulse oximetry; 2708-6 alone may be either (clinical-reference §11.3). */
    public static final String LOINC_SPO2 = "59408-5";

    public static final String LOINC_SAO2_OR_SPO2 = "2708-6";
    public static final String MDC_SPO2 = "150456";

    private final Map<String, CodeMapping> byKey;

    private CodeMap(Map<String, CodeMapping> byKey) {
        this.byKey = Collections.unmodifiableMap(byKey);
    }

    /**
     * The map the conformance package defines: every code of every input ValueSet ({@code ValueSet/input-<kind>}),
     * with the kind from the ValueSet's {@code input-kind} extension and, per code, the role and specimen kind from
     * the {@code input-value-role} and {@code input-specimen-kind} extensions where the code itself states them.
     */
    public static CodeMap fromPackage(ConformancePackage conformance) {
        Map<String, CodeMapping> m = new LinkedHashMap<>();
        for (ValueSet vs : conformance.inputValueSets()) {
            QuantityKind kind = QuantityKinds.fromCode(vs.getExtensionByUrl(LungflagFhir.Extensions.INPUT_KIND)
                    .getValue()
                    .primitiveValue());
            for (ValueSet.ConceptSetComponent include : vs.getCompose().getInclude()) {
                for (ValueSet.ConceptReferenceComponent concept : include.getConcept()) {
                    ValueRole role = Optional.ofNullable(
                                    concept.getExtensionByUrl(LungflagFhir.Extensions.INPUT_VALUE_ROLE))
                            .map(e -> ValueRole.valueOf(
                                    e.getValue().primitiveValue().toUpperCase()))
                            .orElse(defaultRole(kind));
                    SpecimenKind specimen = Optional.ofNullable(
                                    concept.getExtensionByUrl(LungflagFhir.Extensions.INPUT_SPECIMEN_KIND))
                            .map(e -> SpecimenKind.valueOf(
                                    e.getValue().primitiveValue().toUpperCase().replace('-', '_')))
                            .orElse(kind.isBloodSample() ? UNKNOWN : NOT_APPLICABLE);
                    String key = key(include.getSystem(), concept.getCode());
                    CodeMapping earlier = m.get(key);
                    if (earlier != null && earlier.kind() == QuantityKind.SAO2 && kind == QuantityKind.SPO2) {
                        // 2708-6 is in both: read it as SaO2 unless the Observation shows pulse oximetry
                        continue;
                    }
                    m.put(key, new CodeMapping(kind, role, specimen, vs.getUrl()));
                }
            }
        }
        return new CodeMap(m);
    }

    /**
     * The role of a value whose code does not say: FiO2, PEEP, oxygen and inspiratory flow and the support mode are
     * read as in force (the 60 min setting look-back, issue "pairing"), everything else as a measurement.
     */
    static ValueRole defaultRole(QuantityKind kind) {
        return switch (kind) {
            case FIO2, PEEP, O2_FLOW, INSPIRATORY_FLOW, RESPIRATORY_SUPPORT -> SETTING;
            default -> MEASUREMENT;
        };
    }

    static String key(String system, String code) {
        return system + "|" + code;
    }

    public Optional<CodeMapping> lookup(String system, String code) {
        if (system == null || code == null) {
            return Optional.empty();
        }
        return Optional.ofNullable(byKey.get(key(system, code)));
    }

    /** A copy of this map with extra entries (a site's ConceptMap); extra entries win. */
    public CodeMap with(Map<String, CodeMapping> extra) {
        Map<String, CodeMapping> m = new LinkedHashMap<>(byKey);
        m.putAll(extra);
        return new CodeMap(m);
    }

    /** Every mapped coding as {@code system|code}, for Subscription criteria and the catch-up search. */
    public List<String> codings() {
        return List.copyOf(byKey.keySet());
    }

    /** Every mapped coding of one system. */
    public List<String> codes(String system) {
        return byKey.keySet().stream()
                .filter(k -> k.startsWith(system + "|"))
                .map(k -> k.substring(system.length() + 1))
                .toList();
    }
}
