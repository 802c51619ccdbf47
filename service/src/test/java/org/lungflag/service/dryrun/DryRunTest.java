package org.lungflag.service.dryrun;

import static org.assertj.core.api.Assertions.assertThat;

import ca.uhn.fhir.context.FhirContext;
import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.time.Instant;
import java.time.temporal.ChronoUnit;
import java.util.List;
import org.hl7.fhir.r4.model.Bundle;
import org.hl7.fhir.r4.model.Flag;
import org.hl7.fhir.r4.model.OperationOutcome;
import org.hl7.fhir.r4.model.Provenance;
import org.junit.jupiter.api.Test;
import org.lungflag.service.testsupport.TestAccounts;
import org.lungflag.service.writeback.OutgoingValidator;
import org.springframework.beans.factory.annotation.Autowired;
import org.springframework.boot.test.context.SpringBootTest;
import org.springframework.boot.test.web.server.LocalServerPort;
import org.springframework.test.context.ActiveProfiles;
import org.springframework.test.context.TestPropertySource;

/**
 * The dry run returns what would be written, and that output is valid against Lungflag's own profiles (checked
 * with HAPI's instance validator). Expected bands: Berlin 2012 via clinical-reference §2.2 [PUB-2]; P/F = 80/0.50 =
 * 160 is moderate (worked example 2C). Data invented.
 */
@SpringBootTest(webEnvironment = SpringBootTest.WebEnvironment.RANDOM_PORT)
@ActiveProfiles("test")
@TestPropertySource(properties = "lungflag.fhir.base-url=http://127.0.0.1:9/fhir")
class DryRunTest {

    @LocalServerPort
    int port;

    @Autowired
    OutgoingValidator validator;

    private static final FhirContext FHIR = FhirContext.forR4Cached();

    private HttpResponse<String> post(String body) throws Exception {
        return HttpClient.newHttpClient()
                .send(
                        HttpRequest.newBuilder(URI.create("http://127.0.0.1:" + port + "/api/v1/evaluate"))
                                .header("Content-Type", "application/fhir+json")
                                .header("Authorization", TestAccounts.auditor())
                                .POST(HttpRequest.BodyPublishers.ofString(body))
                                .build(),
                        HttpResponse.BodyHandlers.ofString());
    }

    private static String obs(String id, String code, double value, String unit, Instant at, String extra) {
        return """
                {"resource":{"resourceType":"Observation","id":"%s","meta":{"versionId":"1"},"status":"final",
                 "code":{"coding":[{"system":"http://loinc.org","code":"%s"}]},%s
                 "subject":{"reference":"Patient/dry-1"},"effectiveDateTime":"%s",
                 "valueQuantity":{"value":%s,"system":"http://unitsofmeasure.org","code":"%s"}}}
                """.formatted(id, code, extra, at, value, unit);
    }

    private static final String SETTING =
            "\"category\":[{\"coding\":[{\"system\":\"http://lungflag.org/fhir/CodeSystem/value-role\",\"code\":\"setting\"}]}],";

    private String bundle(Instant t0) {
        String support = """
                {"resource":{"resourceType":"Observation","id":"sup-1","meta":{"versionId":"1"},"status":"final",
                 "code":{"coding":[{"system":"http://lungflag.org/fhir/CodeSystem/input-kind","code":"respiratory-support"}]},
                 "subject":{"reference":"Patient/dry-1"},"effectiveDateTime":"%s",
                 "valueCodeableConcept":{"coding":[{"system":"http://lungflag.org/fhir/CodeSystem/respiratory-support","code":"invasive-ventilation"}]}}}
                """.formatted(t0.minus(2, ChronoUnit.HOURS));
        List<String> entries = List.of(
                "{\"resource\":{\"resourceType\":\"Patient\",\"id\":\"dry-1\",\"gender\":\"female\",\"birthDate\":\"1970-05-05\"}}",
                support,
                obs("fio2-1", "19994-3", 0.5, "1", t0.minus(40, ChronoUnit.MINUTES), SETTING),
                obs("peep-1", "76248-4", 8, "cm[H2O]", t0.minus(40, ChronoUnit.MINUTES), SETTING),
                obs("pao2-1", "2703-7", 80, "mm[Hg]", t0, ""),
                // refused inputs, each with its data-quality reason
                obs("hr-1", "8867-4", 80, "/min", t0, ""),
                obs("pao2-bad", "2703-7", 2000, "mm[Hg]", t0.plus(5, ChronoUnit.MINUTES), ""),
                obs("pao2-unit", "2703-7", 80, "mmHg", t0.plus(6, ChronoUnit.MINUTES), ""));
        return "{\"resourceType\":\"Bundle\",\"type\":\"collection\",\"entry\":[" + String.join(",", entries) + "]}";
    }

    @Test
    void returnsTheFlagAndProvenanceThatWouldBeWrittenAndTheyValidateAgainstTheProfiles() throws Exception {
        Instant t0 = Instant.now().minus(3, ChronoUnit.HOURS).truncatedTo(ChronoUnit.MINUTES);
        HttpResponse<String> response = post(bundle(t0));
        assertThat(response.statusCode()).isEqualTo(200);
        Bundle result = FHIR.newJsonParser().parseResource(Bundle.class, response.body());
        List<Flag> flags = result.getEntry().stream()
                .map(Bundle.BundleEntryComponent::getResource)
                .filter(Flag.class::isInstance)
                .map(Flag.class::cast)
                .toList();
        assertThat(flags).singleElement().satisfies(f -> {
            assertThat(f.getCode().getCodingFirstRep().getCode()).isEqualTo("hypoxemia-moderate");
            assertThat(f.getStatus()).isEqualTo(Flag.FlagStatus.ACTIVE);
            assertThat(validator.errors(f)).isEmpty();
        });
        List<Provenance> provenance = result.getEntry().stream()
                .map(Bundle.BundleEntryComponent::getResource)
                .filter(Provenance.class::isInstance)
                .map(Provenance.class::cast)
                .toList();
        assertThat(provenance)
                .singleElement()
                .satisfies(p -> assertThat(validator.errors(p)).isEmpty());
    }

    @Test
    void listsEveryRefusedInputWithItsDataQualityReason() throws Exception {
        Instant t0 = Instant.now().minus(3, ChronoUnit.HOURS).truncatedTo(ChronoUnit.MINUTES);
        Bundle result = FHIR.newJsonParser()
                .parseResource(Bundle.class, post(bundle(t0)).body());
        OperationOutcome outcome = result.getEntry().stream()
                .map(Bundle.BundleEntryComponent::getResource)
                .filter(OperationOutcome.class::isInstance)
                .map(OperationOutcome.class::cast)
                .findFirst()
                .orElseThrow();
        assertThat(outcome.getIssue())
                .extracting(i -> i.getDetails().getCodingFirstRep().getCode())
                .containsExactlyInAnyOrder("unknown-code", "implausible-value", "unknown-unit");
        assertThat(outcome.getIssue())
                .extracting(i -> i.getExpression().get(0).getValue())
                .contains("Observation/hr-1", "Observation/pao2-bad", "Observation/pao2-unit");
    }

    @Test
    void refusesABodyThatIsNotABundle() throws Exception {
        HttpResponse<String> response = post("{\"resourceType\":\"Patient\",\"id\":\"x\"}");
        assertThat(response.statusCode()).isEqualTo(400);
        assertThat(response.body()).contains("takes a Bundle");
        assertThat(post("{not json").statusCode()).isEqualTo(400);
    }
}
