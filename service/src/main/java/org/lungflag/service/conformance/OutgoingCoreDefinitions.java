package org.lungflag.service.conformance;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.context.support.DefaultProfileValidationSupport;
import ca.uhn.fhir.context.support.IValidationSupport;
import java.util.ArrayDeque;
import java.util.Deque;
import java.util.HashMap;
import java.util.HashSet;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Set;
import org.hl7.fhir.common.hapi.validation.support.PrePopulatedValidationSupport;
import org.hl7.fhir.instance.model.api.IBaseResource;
import org.hl7.fhir.r4.model.CodeSystem;
import org.hl7.fhir.r4.model.ElementDefinition;
import org.hl7.fhir.r4.model.StructureDefinition;
import org.hl7.fhir.r4.model.ValueSet;

/**
 * The FHIR R4 core definitions that the outgoing check can need, instead of all of them. HAPI's {@link
 * DefaultProfileValidationSupport} loads every core StructureDefinition, CodeSystem and ValueSet into a JVM-wide
 * cache, and the validator adds an R5 copy of each StructureDefinition: about 185 MiB that stay for the life of the
 * JVM ({@code ValidatorHeapBenchmark}), most of the service's live heap.
 *
 * <p>What is kept, starting from the conformance package's own StructureDefinitions: every core datatype, {@code
 * Resource} and {@code DomainResource}; then, followed to the end, each definition's base, its elements' types and
 * type profiles, and the ValueSets of its elements' bindings with the CodeSystems and ValueSets they include. A
 * reference's target profiles are kept as definitions but not followed (their bindings and targets are never
 * validated here, and following them would take in most of FHIR). The full set is then released ({@link
 * DefaultProfileValidationSupport#flush()}; any other user of it in the JVM loads it again on demand).
 *
 * <p>{@code OutgoingCoreDefinitionsTest} checks that the validator reports exactly the same messages with this subset
 * as with the full set, over the demo's outgoing resources and broken copies of them.
 */
final class OutgoingCoreDefinitions {

    private static final String CORE_SD = "http://hl7.org/fhir/StructureDefinition/";

    private OutgoingCoreDefinitions() {}

    /** What was kept, for the log and the test. */
    record Counts(int structureDefinitions, int valueSets, int codeSystems, int coreStructureDefinitions) {}

    /** The subset as a support of its own, and what it holds. */
    record Subset(PrePopulatedValidationSupport support, Counts counts) {}

    /** The subset for the profiles {@code conformancePackage} serves (which it keeps serving itself). */
    static Subset build(FhirContext fhir, IValidationSupport conformancePackage) {
        DefaultProfileValidationSupport core = new DefaultProfileValidationSupport(fhir);
        Map<String, StructureDefinition> coreDefinitions = new HashMap<>();
        for (IBaseResource r : core.fetchAllStructureDefinitions()) {
            StructureDefinition sd = (StructureDefinition) r;
            coreDefinitions.put(sd.getUrl(), sd);
        }
        Collector collector = new Collector(core, conformancePackage, coreDefinitions);
        for (IBaseResource r : conformancePackage.fetchAllStructureDefinitions()) {
            collector.follow((StructureDefinition) r);
        }
        for (StructureDefinition sd : coreDefinitions.values()) {
            boolean datatype = sd.getKind() == StructureDefinition.StructureDefinitionKind.PRIMITIVETYPE
                    || sd.getKind() == StructureDefinition.StructureDefinitionKind.COMPLEXTYPE;
            if ((datatype && sd.getDerivation() == StructureDefinition.TypeDerivationRule.SPECIALIZATION)
                    || sd.getUrl().equals(CORE_SD + "Resource")
                    || sd.getUrl().equals(CORE_SD + "DomainResource")) {
                collector.follow(sd);
            }
        }
        collector.drain();
        PrePopulatedValidationSupport subset = new PrePopulatedValidationSupport(fhir);
        collector.structureDefinitions.values().forEach(subset::addStructureDefinition);
        collector.valueSets.values().forEach(subset::addValueSet);
        collector.codeSystems.values().forEach(subset::addCodeSystem);
        Counts counts = new Counts(
                collector.structureDefinitions.size(),
                collector.valueSets.size(),
                collector.codeSystems.size(),
                coreDefinitions.size());
        core.flush();
        return new Subset(subset, counts);
    }

    /** Walks the definitions from the package's profiles; keeps only core resources (the package serves its own). */
    private static final class Collector {
        private final DefaultProfileValidationSupport core;
        private final IValidationSupport conformancePackage;
        private final Map<String, StructureDefinition> coreDefinitions;
        final Map<String, StructureDefinition> structureDefinitions = new LinkedHashMap<>();
        final Map<String, ValueSet> valueSets = new LinkedHashMap<>();
        final Map<String, CodeSystem> codeSystems = new LinkedHashMap<>();
        private final Set<String> seen = new HashSet<>();
        private final Deque<StructureDefinition> toFollow = new ArrayDeque<>();

        Collector(
                DefaultProfileValidationSupport core,
                IValidationSupport conformancePackage,
                Map<String, StructureDefinition> coreDefinitions) {
            this.core = core;
            this.conformancePackage = conformancePackage;
            this.coreDefinitions = coreDefinitions;
        }

        void follow(StructureDefinition sd) {
            if (seen.add("sd " + sd.getUrl())) {
                toFollow.add(sd);
            }
        }

        void drain() {
            while (!toFollow.isEmpty()) {
                StructureDefinition sd = toFollow.poll();
                if (coreDefinitions.get(sd.getUrl()) == sd) {
                    structureDefinitions.put(sd.getUrl(), sd);
                }
                structure(sd.getBaseDefinition(), true);
                for (List<ElementDefinition> elements : List.of(
                        sd.getSnapshot().getElement(), sd.getDifferential().getElement())) {
                    for (ElementDefinition e : elements) {
                        for (ElementDefinition.TypeRefComponent type : e.getType()) {
                            structure(type.getCode(), true);
                            type.getProfile().forEach(p -> structure(p.getValue(), true));
                            type.getTargetProfile().forEach(p -> structure(p.getValue(), false));
                        }
                        if (e.hasBinding() && e.getBinding().hasValueSet()) {
                            valueSet(e.getBinding().getValueSet());
                        }
                    }
                }
            }
        }

        /** A type code or canonical: core definitions are kept (and followed when {@code follow}). */
        private void structure(String codeOrUrl, boolean follow) {
            if (codeOrUrl == null || codeOrUrl.isEmpty()) {
                return;
            }
            String url = codeOrUrl.contains("/") ? withoutVersion(codeOrUrl) : CORE_SD + codeOrUrl;
            StructureDefinition coreSd = coreDefinitions.get(url);
            if (coreSd != null) {
                if (follow) {
                    follow(coreSd);
                } else if (!structureDefinitions.containsKey(url)) {
                    structureDefinitions.put(url, coreSd);
                }
                return;
            }
            if (follow && conformancePackage.fetchStructureDefinition(url) instanceof StructureDefinition own) {
                follow(own);
            }
        }

        private void valueSet(String canonical) {
            String url = withoutVersion(canonical);
            if (!seen.add("vs " + url)) {
                return;
            }
            IBaseResource found = conformancePackage.fetchValueSet(url);
            boolean own = found != null;
            if (found == null) {
                found = core.fetchValueSet(url);
            }
            if (!(found instanceof ValueSet vs)) {
                return;
            }
            if (!own) {
                valueSets.put(url, vs);
            }
            for (List<ValueSet.ConceptSetComponent> sets :
                    List.of(vs.getCompose().getInclude(), vs.getCompose().getExclude())) {
                for (ValueSet.ConceptSetComponent set : sets) {
                    if (set.hasSystem()) {
                        codeSystem(set.getSystem());
                    }
                    set.getValueSet().forEach(v -> valueSet(v.getValue()));
                }
            }
        }

        private void codeSystem(String canonical) {
            String url = withoutVersion(canonical);
            if (!seen.add("cs " + url) || conformancePackage.fetchCodeSystem(url) != null) {
                return;
            }
            if (core.fetchCodeSystem(url) instanceof CodeSystem cs) {
                codeSystems.put(url, cs);
            }
        }

        private static String withoutVersion(String canonical) {
            int bar = canonical.indexOf('|');
            return bar < 0 ? canonical : canonical.substring(0, bar);
        }
    }
}
