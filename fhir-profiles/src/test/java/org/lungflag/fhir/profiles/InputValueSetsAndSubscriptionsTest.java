package org.lungflag.fhir.profiles;

import static org.assertj.core.api.Assertions.assertThat;

import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.LinkedHashSet;
import java.util.List;
import java.util.Set;
import org.hl7.fhir.r4.model.Subscription;
import org.hl7.fhir.r4.model.ValueSet;
import org.junit.jupiter.api.Test;
import org.lungflag.rules.measure.QuantityKind;

/**
 * The input ValueSets (clinical-reference §11): one per input kind, only verified codes, the documented ambiguous
 * cases present, the unverified ones left out (and listed in REVIEW.md); the Subscription templates list exactly
 * the codes of the input groups, each code once.
 */
class InputValueSetsAndSubscriptionsTest {

    private static final ConformancePackage PKG = ConformancePackage.load();
    private static final String LOINC = "http://loinc.org|";
    private static final String MDC = "urn:iso:std:iso:11073:10101|";
    private static final String SCT = "http://snomed.info/sct|";

    /** Codes the reference sheet tags [MULTI] or [MEM]: not included until verified, listed in REVIEW.md. */
    private static final List<String> UNVERIFIED = List.of(
            LOINC + "20077-4", // PEEP setting [MULTI]/[MEM]
            LOINC + "60829-9", // plateau pressure without ventilator context [MULTI]
            LOINC + "76007-4", // expired tidal volume [MULTI]
            LOINC + "19834-1", // breath rate setting [MEM]
            LOINC + "30313-1", // hemoglobin arterial [MULTI]
            LOINC + "1960-4", // HCO3 arterial [MULTI]
            LOINC + "2518-9", // lactate arterial [MULTI]
            LOINC + "20124-4", // ventilation mode [MEM]
            MDC + "152196", // FiO2 [MULTI]
            MDC + "151804", // PEEP extrinsic [MULTI]
            MDC + "151808", // PEEP intrinsic [MULTI]
            MDC + "152788", // PEEP total [MULTI]
            MDC + "152664", // expired tidal volume [MULTI]
            MDC + "152000"); // expired minute volume [MULTI]

    @Test
    void everyInputKindHasExactlyOneInputValueSetThatNamesIt() {
        for (QuantityKind kind : QuantityKind.values()) {
            String code = CodeSystemsMatchTheRulesCoreTest.kebab(kind);
            ValueSet vs = PKG.valueSet(LungflagFhir.inputValueSet(code));
            assertThat(vs.getExtensionByUrl(LungflagFhir.Extensions.INPUT_KIND))
                    .as(vs.getUrl())
                    .isNotNull()
                    .satisfies(e -> assertThat(e.getValue().primitiveValue()).isEqualTo(code));
            assertThat(PKG.expand(vs.getUrl())).as(vs.getUrl()).isNotEmpty();
        }
        long inputKindValueSets = PKG.all(ValueSet.class).stream()
                .filter(vs -> vs.getExtensionByUrl(LungflagFhir.Extensions.INPUT_KIND) != null)
                .count();
        assertThat(inputKindValueSets).isEqualTo(QuantityKind.values().length);
    }

    @Test
    void inputValueSetsHoldTheVerifiedCodesOfTheReferenceSheet() {
        // clinical-reference §11.1-11.3, codes tagged [CODE-V]
        assertThat(PKG.expand(LungflagFhir.inputValueSet("pao2"))).contains(LOINC + "2703-7", LOINC + "11556-8");
        assertThat(PKG.expand(LungflagFhir.inputValueSet("paco2"))).contains(LOINC + "2019-8");
        assertThat(PKG.expand(LungflagFhir.inputValueSet("ph"))).contains(LOINC + "2744-1");
        assertThat(PKG.expand(LungflagFhir.inputValueSet("fio2")))
                .containsExactly(LOINC + "3150-0", LOINC + "19994-3", LOINC + "71835-3");
        assertThat(PKG.expand(LungflagFhir.inputValueSet("plateau-pressure")))
                .containsExactly(LOINC + "76259-1", MDC + "152424");
        assertThat(PKG.expand(LungflagFhir.inputValueSet("tidal-volume")))
                .containsExactlyInAnyOrder(LOINC + "20112-9", LOINC + "76222-9", MDC + "16929196", MDC + "151980");
        assertThat(PKG.expand(LungflagFhir.inputValueSet("etco2"))).containsExactly(LOINC + "19891-1", MDC + "151708");
        assertThat(PKG.expand(LungflagFhir.inputValueSet("body-height")))
                .containsExactly(LOINC + "8302-2", LOINC + "8306-3");
    }

    @Test
    void ambiguousCodesTheSheetWarnsAboutAreHandledAsDocumented() {
        // 2708-6 is both SaO2 and the base code of the SpO2 vital sign (§11.3)
        assertThat(PKG.expand(LungflagFhir.inputValueSet("sao2"))).contains(LOINC + "2708-6");
        assertThat(PKG.expand(LungflagFhir.inputValueSet("spo2")))
                .containsExactlyInAnyOrder(LOINC + "59408-5", LOINC + "2708-6", MDC + "150456");
        // peak pressure: two public sources pair 76531-3 with different MDC codes (§11.3, trap 21)
        assertThat(PKG.expand(LungflagFhir.inputValueSet("peak-pressure")))
                .containsExactlyInAnyOrder(LOINC + "76531-3", MDC + "151957", MDC + "151973");
        // PEEP: 76248-4 states no role; 20077-4 is unverified
        assertThat(PKG.expand(LungflagFhir.inputValueSet("peep")))
                .containsExactly(LOINC + "76248-4", MDC + "151976")
                .doesNotContain(LOINC + "20077-4");
        assertThat(PKG.valueSet(LungflagFhir.inputValueSet("peep")).getDescription())
                .contains("20077-4")
                .contains("DeviceMetric");
        assertThat(PKG.valueSet(LungflagFhir.inputValueSet("sao2")).getDescription())
                .contains("59408-5", "150456", "vital-signs");
    }

    @Test
    void unverifiedCodesAreLeftOutAndListedForReview() throws IOException {
        Set<String> all = PKG.expand(LungflagFhir.ValueSets.INPUT_ALL);
        String review = Files.readString(Path.of("REVIEW.md"), StandardCharsets.UTF_8);
        for (String code : UNVERIFIED) {
            assertThat(all)
                    .as("unverified " + code + " is not an included input code")
                    .doesNotContain(code);
            assertThat(review).as("REVIEW.md lists " + code).contains(code.substring(code.indexOf('|') + 1));
        }
    }

    @Test
    void bloodSpecimenTypesAreTheSnomedCodesOfTheSheet() {
        // clinical-reference §11.4
        assertThat(PKG.expand(LungflagFhir.ValueSets.BLOOD_SPECIMEN_TYPE))
                .containsExactly(SCT + "122552005", SCT + "122555007", SCT + "122554006", SCT + "119297000");
    }

    @Test
    void allInputsIsTheUnionOfTheInputKindValueSets() {
        Set<String> union = new LinkedHashSet<>();
        Arrays.stream(QuantityKind.values())
                .forEach(k -> union.addAll(
                        PKG.expand(LungflagFhir.inputValueSet(CodeSystemsMatchTheRulesCoreTest.kebab(k)))));
        assertThat(PKG.expand(LungflagFhir.ValueSets.INPUT_ALL)).containsExactlyInAnyOrderElementsOf(union);
    }

    @Test
    void subscriptionTemplatesListEveryInputCodeExactlyOnce() {
        List<String> criteriaCodes = new ArrayList<>();
        for (Subscription s : PKG.all(Subscription.class)) {
            criteriaCodes.addAll(codes(s));
        }
        assertThat(criteriaCodes).doesNotHaveDuplicates();
        assertThat(criteriaCodes).containsExactlyInAnyOrderElementsOf(PKG.expand(LungflagFhir.ValueSets.INPUT_ALL));
    }

    @Test
    void eachObservationSubscriptionCoversItsInputGroup() {
        Set<String> procedures = Set.of(SCT + "40617009", SCT + "431182000");
        for (Subscription s : PKG.all(Subscription.class)) {
            String id = s.getIdElement().getIdPart();
            if (id.equals("lungflag-procedures")) {
                assertThat(s.getCriteria()).startsWith("Procedure?code=");
                assertThat(codes(s)).containsExactlyInAnyOrderElementsOf(procedures);
                continue;
            }
            assertThat(s.getCriteria()).startsWith("Observation?code=");
            Set<String> group = new LinkedHashSet<>(PKG.expand(
                    LungflagFhir.CANONICAL_BASE + "/ValueSet/input-group-" + id.substring("lungflag-".length())));
            group.removeAll(procedures);
            assertThat(group).containsAll(codes(s));
        }
    }

    @Test
    void subscriptionTemplatesAreRestHooksWithPayloadAndTokenPlaceholders() {
        assertThat(PKG.all(Subscription.class)).hasSize(4).allSatisfy(s -> {
            assertThat(s.getStatus()).isEqualTo(Subscription.SubscriptionStatus.REQUESTED);
            assertThat(s.getChannel().getType()).isEqualTo(Subscription.SubscriptionChannelType.RESTHOOK);
            assertThat(s.getChannel().getPayload()).isEqualTo("application/fhir+json");
            assertThat(s.getChannel().getEndpoint()).isEqualTo(LungflagFhir.SubscriptionTemplate.ENDPOINT_PLACEHOLDER);
            assertThat(s.getChannel().getHeader())
                    .extracting(h -> h.getValue())
                    .containsExactly(LungflagFhir.SubscriptionTemplate.AUTHORIZATION_HEADER_PLACEHOLDER);
            assertThat(s.getMeta().getTag())
                    .anySatisfy(
                            t -> assertThat(t.getSystem()).isEqualTo(LungflagFhir.CodeSystems.SUBSCRIPTION_TEMPLATE));
        });
    }

    private static List<String> codes(Subscription s) {
        String criteria = s.getCriteria();
        return List.of(
                criteria.substring(criteria.indexOf("code=") + "code=".length()).split(","));
    }
}
