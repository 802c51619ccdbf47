package org.lungflag.service.conformance;

import static org.assertj.core.api.Assertions.assertThat;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.validation.FhirValidator;
import ca.uhn.fhir.validation.ResultSeverityEnum;
import ca.uhn.fhir.validation.SingleValidationMessage;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Collections;
import java.util.List;
import java.util.Random;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;
import org.hl7.fhir.common.hapi.validation.validator.FhirInstanceValidator;
import org.hl7.fhir.r4.model.Bundle;
import org.hl7.fhir.r4.model.Coding;
import org.hl7.fhir.r4.model.Flag;
import org.hl7.fhir.r4.model.Observation;
import org.hl7.fhir.r4.model.Provenance;
import org.hl7.fhir.r4.model.Quantity;
import org.hl7.fhir.r4.model.Resource;
import org.hl7.fhir.r4.model.StringType;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.lungflag.service.offline.Pipelines;
import org.lungflag.service.testsupport.DemoScenarioOffline;

/**
 * {@link ReusingInstanceValidator} against the reference it replaces: HAPI FHIR's own {@link FhirInstanceValidator}
 * (hapi-fhir-validation 8.8.0, which builds a new core validator for every resource), on the same support chain.
 * The inputs are what the outbox writes (the Flags, Provenances and derived-index Observations of the demo
 * scenario, through the real engine) and broken copies of them, shuffled, so that a reused validator meets a valid
 * resource right after an invalid one. Every message, of every severity, must be the same as HAPI's.
 */
class ReusingInstanceValidatorTest {

    static final FhirContext FHIR = Pipelines.fhirContext();

    static List<Resource> corpus;

    static List<List<String>> expected;

    /** The broken copies in {@link #corpus} (by identity). */
    static final java.util.Set<Resource> broken = Collections.newSetFromMap(new java.util.IdentityHashMap<>());

    @BeforeAll
    static void referenceMessages() {
        corpus = corpus(new Random(11));
        System.out.println("validator equivalence corpus: " + corpus.size() + " resources, " + broken.size()
                + " of them broken copies");
        FhirValidator hapi = ConformanceValidator.validatorWithAllCoreDefinitions(FHIR, FhirInstanceValidator::new);
        expected = new ArrayList<>();
        for (Resource r : corpus) {
            expected.add(messages(hapi, r));
        }
    }

    /** What the outbox writes for the demo scenario, with broken copies, in seeded random order. */
    static List<Resource> corpus(Random random) {
        DemoScenarioOffline demo = DemoScenarioOffline.load();
        List<Resource> written = new ArrayList<>();
        Instant now = demo.end();
        for (String patient : demo.byPatient().keySet()) {
            List<Resource> indices = new ArrayList<>();
            for (Bundle.BundleEntryComponent e : demo.offline().toWrite(demo.run(patient), "live", now, true)) {
                if (e.getResource() instanceof Provenance p) {
                    // the scenario's records carry no server version; the live service cites the version it read
                    p.getEntity()
                            .forEach(x -> x.getWhat().setReference(x.getWhat().getReference() + "/_history/1"));
                }
                (e.getResource() instanceof Observation ? indices : written).add(e.getResource());
            }
            // a few derived indices per patient: they are many and alike
            Collections.shuffle(indices, random);
            written.addAll(indices.subList(0, Math.min(4, indices.size())));
        }
        List<Resource> out = new ArrayList<>(written);
        for (Resource r : written) {
            Resource copy = broken(r, random.nextInt(5));
            broken.add(copy);
            out.add(copy);
        }
        Collections.shuffle(out, random);
        return out;
    }

    /** A copy with one fault that breaks the base resource or one of the conformance package's profiles. */
    static Resource broken(Resource r, int fault) {
        Resource copy = r.copy();
        if (fault == 0 || fault == 4) {
            if (fault == 0) {
                copy.getMeta().getProfile().clear(); // only an unknown profile: HAPI reports it itself
            }
            copy.getMeta().addProfile("http://example.org/fhir/StructureDefinition/no-such-profile");
            return copy;
        }
        if (copy instanceof Flag f) {
            switch (fault) {
                case 1 -> f.setStatus(null); // Flag.status is 1..1
                case 2 -> f.getCode().getCodingFirstRep().setCode("no-such-tier");
                default -> f.addExtension("http://example.org/fhir/StructureDefinition/unknown", new StringType("x"));
            }
        } else if (copy instanceof Observation o) {
            switch (fault) {
                case 1 -> o.setStatus(null); // Observation.status is 1..1
                case 2 -> o.setValue(new Quantity().setValue(3).setSystem("http://unitsofmeasure.org"));
                default -> o.getCode().addCoding(new Coding("http://loinc.org", "not a code", null));
            }
        } else if (copy instanceof Provenance p) {
            switch (fault) {
                case 1 -> p.setRecorded(null); // Provenance.recorded is 1..1
                case 2 -> p.getAgent().clear(); // Provenance.agent is 1..*
                default -> p.getActivity().getCodingFirstRep().setCode("NO-SUCH-OPERATION");
            }
        }
        return copy;
    }

    static List<String> messages(FhirValidator validator, Resource r) {
        List<String> out = new ArrayList<>();
        for (SingleValidationMessage m : validator.validateWithResult(r).getMessages()) {
            out.add(m.getSeverity() + " | " + m.getLocationString() + " | " + m.getMessageId() + " | "
                    + m.getMessage());
        }
        return out;
    }

    static boolean hasError(List<String> messages) {
        return messages.stream()
                .anyMatch(m ->
                        m.startsWith(ResultSeverityEnum.ERROR + " ") || m.startsWith(ResultSeverityEnum.FATAL + " "));
    }

    @Test
    void theCorpusHoldsValidAndInvalidResourcesOfEveryKindWritten() {
        long invalid =
                expected.stream().filter(ReusingInstanceValidatorTest::hasError).count();
        assertThat(invalid).as("resources HAPI finds errors in").isGreaterThan(corpus.size() / 4);
        assertThat(corpus.size() - invalid)
                .as("resources HAPI finds no error in")
                .isGreaterThan(corpus.size() / 4);
        assertThat(corpus.stream().map(Resource::fhirType).distinct())
                .containsExactlyInAnyOrder("Flag", "Provenance", "Observation");
        for (int i = 0; i < corpus.size(); i++) {
            if (!broken.contains(corpus.get(i))) {
                // what the outbox writes conforms (the same check the outbox makes before each write)
                assertThat(hasError(expected.get(i)))
                        .as(describe(i) + ": " + expected.get(i))
                        .isFalse();
            }
        }
    }

    @Test
    void oneReusedInstanceGivesHapisMessagesForEveryResource() {
        check(ConformanceValidator.validatorWithAllCoreDefinitions(
                FHIR, chain -> new ReusingInstanceValidator(chain, Integer.MAX_VALUE)));
    }

    @Test
    void instancesReplacedEveryFewValidationsGiveHapisMessages() {
        check(ConformanceValidator.validatorWithAllCoreDefinitions(
                FHIR, chain -> new ReusingInstanceValidator(chain, 5)));
    }

    @Test
    void anInstanceIsRetiredAfterItsUses() {
        List<ReusingInstanceValidator> module = new ArrayList<>();
        FhirValidator reusing = ConformanceValidator.validatorWithAllCoreDefinitions(FHIR, chain -> {
            module.add(new ReusingInstanceValidator(chain, 3));
            return module.get(0);
        });
        int[] idleAfter = new int[7];
        for (int i = 0; i < idleAfter.length; i++) {
            messages(reusing, corpus.get(i));
            idleAfter[i] = module.get(0).idleInstances();
        }
        // one thread: the instance goes back to the pool after its first and second use, not after its third
        assertThat(idleAfter).containsExactly(1, 1, 0, 1, 1, 0, 1);
    }

    @Test
    void severalThreadsAtOnceGiveHapisMessages() throws Exception {
        FhirValidator reusing = ConformanceValidator.validatorWithAllCoreDefinitions(
                FHIR, chain -> new ReusingInstanceValidator(chain, ConformanceValidator.VALIDATIONS_PER_INSTANCE));
        ExecutorService pool = Executors.newFixedThreadPool(4);
        try {
            List<Future<List<String>>> results = new ArrayList<>();
            for (Resource r : corpus) {
                results.add(pool.submit(() -> messages(reusing, r)));
            }
            for (int i = 0; i < corpus.size(); i++) {
                assertThat(results.get(i).get()).as(describe(i)).isEqualTo(expected.get(i));
            }
        } finally {
            pool.shutdownNow();
        }
    }

    private static void check(FhirValidator reusing) {
        for (int i = 0; i < corpus.size(); i++) {
            assertThat(messages(reusing, corpus.get(i))).as(describe(i)).isEqualTo(expected.get(i));
        }
    }

    private static String describe(int i) {
        return "resource " + i + " (" + corpus.get(i).fhirType() + ") in the shuffled corpus";
    }
}
