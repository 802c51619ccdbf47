package org.lungflag.service.writeback;

import static org.assertj.core.api.Assertions.assertThat;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.parser.IParser;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.Random;
import org.hl7.fhir.r4.model.Observation;
import org.junit.jupiter.api.Test;
import org.lungflag.rules.engine.UsedIndex;
import org.lungflag.rules.index.IndexDefinition;
import org.lungflag.rules.index.IndexDefinitions;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.service.conformance.ConformanceValidator;
import org.lungflag.service.offline.Pipelines;

/**
 * {@link DerivedIndexJson} against the reference it replaces: HAPI FHIR's own JSON encoder (the reference library,
 * hapi-fhir 8.8) run on {@link AdvisoryResources#derivedIndex}'s Observation. Expected texts are what that encoder
 * writes, never typed in here; then the text is parsed back by HAPI and validated against the conformance package's
 * derived-index profile with the project's {@link ConformanceValidator}.
 */
class DerivedIndexJsonTest {

    static final FhirContext FHIR = Pipelines.fhirContext();

    static final Instant ISSUED = Instant.parse("2026-01-31T00:00:00Z");

    /** Every index the registry defines, each with its own unit and formula, at many values and anchors. */
    static List<UsedIndex> indices(Random random) {
        List<UsedIndex> out = new ArrayList<>();
        double[] special = {
            0, -0.0, 1, 16, 16.5, 100, 1e-7, 123456789.123, -3.25, 0.1 + 0.2, Double.MIN_VALUE, 1e21, 299.99999999999994
        };
        for (IndexDefinition d : IndexDefinitions.all()) {
            for (int i = 0; i < 40; i++) {
                double value =
                        i < special.length ? special[i] : random.nextGaussian() * Math.pow(10, random.nextInt(7));
                List<SourceRef> inputs = new ArrayList<>();
                for (int k = 0; k < random.nextInt(4); k++) {
                    inputs.add(new SourceRef(
                            "Observation", "obs-" + random.nextInt(50) + "." + k, k == 2 ? null : "" + (1 + k)));
                }
                if (i % 5 == 0 && !inputs.isEmpty()) {
                    inputs.add(inputs.get(0)); // the same record twice: one derivedFrom
                }
                List<String> notes = switch (i % 4) {
                    case 0 -> List.of();
                    case 1 -> List.of("PEEP: set PEEP used");
                    case 2 -> List.of("valid only with a true plateau", "FiO2 21 % assumed (room air) \"as charted\"");
                    default -> List.of("SpO2 ≤ 97 %; µ and ² kept as written; back\\slash & <tag>");
                };
                out.add(new UsedIndex(d.code(), value, d.unit(), d.formula(), inputs, notes));
            }
        }
        return out;
    }

    @Test
    void writesWhatHapiWritesForTheBuiltObservation() {
        IParser hapi = FHIR.newJsonParser();
        DerivedIndexJson json = new DerivedIndexJson(FHIR);
        Random random = new Random(11);
        String issuedText = DerivedIndexJson.instantText(ISSUED);
        int n = 0;
        for (UsedIndex index : indices(random)) {
            Instant anchor = ISSUED.minusSeconds(random.nextInt(10_000_000)).minusMillis(random.nextInt(3) * 250L);
            for (String patient : List.of("bench-88", "A.b-9", "p" + n)) {
                String expected =
                        hapi.encodeResourceToString(AdvisoryResources.derivedIndex(patient, index, anchor, ISSUED));
                assertThat(json.encode(patient, index, anchor, ISSUED, issuedText))
                        .as(index + " for " + patient)
                        .isEqualTo(expected);
                n++;
            }
        }
        assertThat(n).isGreaterThan(2000);
    }

    /** Ids HAPI might write differently (not FHIR ids), text with edge whitespace: handed to HAPI, still equal. */
    /**
     * The hand-written id checks (ObservationMapper's, which this writer uses, and the resource-type check) against the regular expressions of the FHIR R4 specification: the id datatype
     * {@code [A-Za-z0-9\-\.]{1,64}} (http://hl7.org/fhir/R4/datatypes.html#id) and a reference's resource type (a
     * capitalised name of letters; common practice, no source for the 64-character cap, which this writer chooses).
     */
    @Test
    void idChecksAgreeWithTheSpecificationsRegularExpressions() {
        java.util.regex.Pattern id = java.util.regex.Pattern.compile("[A-Za-z0-9\\-\\.]{1,64}");
        java.util.regex.Pattern type = java.util.regex.Pattern.compile("[A-Z][A-Za-z]{0,63}");
        Random random = new Random(11);
        String alphabet = "aZz09-._ /:|#üÀ\u0000\u00e9\"";
        List<String> tried = new ArrayList<>(List.of("", "a", "x".repeat(64), "x".repeat(65), "Observation", "obs"));
        for (int i = 0; i < 20_000; i++) {
            StringBuilder b = new StringBuilder();
            int n = random.nextInt(i % 100 == 0 ? 70 : 8);
            for (int k = 0; k < n; k++) {
                b.append(alphabet.charAt(random.nextInt(alphabet.length())));
            }
            tried.add(b.toString());
        }
        for (String s : tried) {
            assertThat(org.lungflag.service.normalize.ObservationMapper.isFhirId(s))
                    .as("id %s", s)
                    .isEqualTo(id.matcher(s).matches());
            assertThat(DerivedIndexJson.isResourceType(s))
                    .as("type %s", s)
                    .isEqualTo(type.matcher(s).matches());
        }
    }

    @Test
    void whatItDoesNotWriteItselfGoesThroughHapi() {
        IParser hapi = FHIR.newJsonParser();
        DerivedIndexJson json = new DerivedIndexJson(FHIR);
        IndexDefinition pf = IndexDefinitions.PF_RATIO;
        Instant anchor = Instant.parse("2026-01-30T10:05:00Z");
        List<UsedIndex> odd = List.of(
                new UsedIndex(
                        pf.code(), 160, pf.unit(), pf.formula(), List.of(SourceRef.observation("a b", "1")), List.of()),
                new UsedIndex(pf.code(), 160, pf.unit(), pf.formula(), List.of(), List.of(" leading space")),
                new UsedIndex(pf.code(), 160, pf.unit(), pf.formula(), List.of(), List.of("two\nlines")),
                new UsedIndex(pf.code(), 160, pf.unit(), pf.formula(), List.of(), List.of("")),
                new UsedIndex(pf.code(), 160, "", pf.formula(), List.of(), List.of()));
        for (String patient : List.of("bench-1", "with space", "x".repeat(65), "ü")) {
            for (UsedIndex index : odd) {
                assertThat(json.encode(patient, index, anchor, ISSUED, DerivedIndexJson.instantText(ISSUED)))
                        .as(index + " for " + patient)
                        .isEqualTo(hapi.encodeResourceToString(
                                AdvisoryResources.derivedIndex(patient, index, anchor, ISSUED)));
            }
        }
    }

    @Test
    void hapiReadsItBackAsTheSameObservationAndTheProfileAcceptsIt() {
        IParser hapi = FHIR.newJsonParser();
        DerivedIndexJson json = new DerivedIndexJson(FHIR);
        ConformanceValidator validator = new ConformanceValidator(FHIR);
        Random random = new Random(5);
        List<UsedIndex> all = indices(random);
        String issuedText = DerivedIndexJson.instantText(ISSUED);
        // about one of each index (the validator takes ~20 ms a resource once warm), with and without notes; the
        // profile requires derivedFrom (an index is always computed from records), so only those with inputs
        List<UsedIndex> withInputs =
                all.stream().filter(u -> !u.inputs().isEmpty()).toList();
        for (int i = 0; i < withInputs.size(); i += 23) {
            UsedIndex index = withInputs.get(i);
            Instant anchor = Instant.parse("2026-01-30T10:05:00Z").plusSeconds(i);
            Observation built = AdvisoryResources.derivedIndex("bench-7", index, anchor, ISSUED);
            Observation read =
                    (Observation) hapi.parseResource(json.encode("bench-7", index, anchor, ISSUED, issuedText));
            // read back: the same clinical content as the built resource (not compared as re-encoded text: HAPI
            // itself writes a decimal it read as 1.0E+21 back as 1000000000000000000000)
            assertThat(read.getIdentifierFirstRep().getValue())
                    .isEqualTo(built.getIdentifierFirstRep().getValue());
            assertThat(read.getCode().getCodingFirstRep().getCode())
                    .isEqualTo(index.code().code());
            assertThat(read.getValueQuantity().getCode()).isEqualTo(index.unit());
            assertThat(read.getValueQuantity().getValue().doubleValue()).isEqualTo(index.value());
            assertThat(read.getEffectiveDateTimeType().getValue().toInstant()).isEqualTo(anchor);
            assertThat(read.getDerivedFrom())
                    .extracting(r -> r.getReference())
                    .containsExactlyElementsOf(index.inputs().stream()
                            .map(SourceRef::toString)
                            .distinct()
                            .toList());
            assertThat(validator.errors(read)).as(index.toString()).isEmpty();
        }
    }
}
