package org.lungflag.service.e2e;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.within;
import static org.awaitility.Awaitility.await;

import com.fasterxml.jackson.databind.JsonNode;
import java.net.http.HttpResponse;
import java.time.Duration;
import java.time.Instant;
import java.time.temporal.ChronoUnit;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.MethodOrderer;
import org.junit.jupiter.api.Order;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.TestInstance;
import org.junit.jupiter.api.TestMethodOrder;
import org.lungflag.rules.catalog.Cautions;
import org.lungflag.rules.catalog.RuleCatalog;
import org.lungflag.service.intake.SubscriptionRegistrar;
import org.lungflag.service.testsupport.ApiClient;
import org.springframework.beans.factory.annotation.Autowired;
import org.springframework.boot.test.context.SpringBootTest;
import org.springframework.boot.test.web.server.LocalServerPort;
import org.springframework.test.annotation.DirtiesContext;
import org.springframework.test.context.ActiveProfiles;
import org.springframework.test.context.DynamicPropertyRegistry;
import org.springframework.test.context.DynamicPropertySource;

/**
 * The audit API on data that went through the real pipeline: Observations created on the embedded HAPI server reach
 * the service by rest-hook, are evaluated and audited, and the API explains the result from the audit store alone.
 * Expected values: Berlin 2012 (P/F bands, via clinical-reference §2.2), Amato 2015 (driving pressure = plateau −
 * PEEP), Sinha 2009 (ventilatory ratio), ARDSNet (predicted body weight); see {@link AuditScenario}. Data invented.
 */
@SpringBootTest(webEnvironment = SpringBootTest.WebEnvironment.DEFINED_PORT)
@ActiveProfiles("test")
@DirtiesContext(classMode = DirtiesContext.ClassMode.AFTER_CLASS)
@TestInstance(TestInstance.Lifecycle.PER_CLASS)
@TestMethodOrder(MethodOrderer.OrderAnnotation.class)
class AuditApiEndToEndTest {

    @DynamicPropertySource
    static void sandbox(DynamicPropertyRegistry registry) {
        SandboxServer.register(registry);
        registry.add("lungflag.intake.register-subscriptions", () -> "true");
        // only what this class creates: other classes' records on the shared server stay out of the statistics
        registry.add("lungflag.intake.catch-up-initial-look-back", () -> "1s");
        registry.add("lungflag.evaluation.advance-interval", () -> "1h");
    }

    @LocalServerPort
    int port;

    @Autowired
    SubscriptionRegistrar registrar;

    @Autowired
    RuleCatalog catalog;

    AuditScenario scenario;
    ApiClient api;
    AuditScenario.Made worsening;
    AuditScenario.Made improving;
    String badUnit;

    @BeforeAll
    void data() {
        scenario = new AuditScenario();
        api = ApiClient.auditor(port);
        await().atMost(Duration.ofSeconds(60)).until(registrar::registered);
        Instant t0 = Instant.now().minus(20, ChronoUnit.HOURS).truncatedTo(ChronoUnit.MINUTES);
        worsening = scenario.worsening(t0);
        improving = scenario.improving(t0);
        badUnit = scenario.badUnit(worsening.patient(), t0.plus(3, ChronoUnit.HOURS));
        await().atMost(Duration.ofSeconds(90)).untilAsserted(() -> {
            assertThat(api.json("/api/v1/advisories?patient=Patient/" + worsening.patient()))
                    .anySatisfy(a -> assertThat(a.path("code").asText()).isEqualTo("hypoxemia-severe"));
            assertThat(api.json("/api/v1/advisories?patient=" + improving.patient() + "&rule=hypoxemia"))
                    .anySatisfy(a -> assertThat(a.path("status").asText()).isEqualTo("RESOLVED"));
        });
    }

    @AfterAll
    void stopDeliveries() {
        AuditScenario.deleteSubscriptionsOf(scenario, port);
    }

    private JsonNode hypoxemiaEpisode(String patient) {
        JsonNode list = api.json("/api/v1/advisories?rule=hypoxemia&patient=" + patient);
        assertThat(list).hasSize(1);
        return list.get(0);
    }

    @Test
    @Order(1)
    void listsAdvisoriesFilteredByRuleCodeStatusPatientAndDate() {
        JsonNode episode = hypoxemiaEpisode(worsening.patient());
        assertThat(episode.path("patient").asText()).isEqualTo("Patient/" + worsening.patient());
        assertThat(episode.path("status").asText()).isEqualTo("ACTIVE");
        assertThat(episode.path("ruleVersion").asText())
                .isEqualTo(catalog.rule("hypoxemia").orElseThrow().version());
        assertThat(Instant.parse(episode.path("startedAt").asText())).isEqualTo(worsening.t0());
        assertThat(api.json("/api/v1/advisories?code=hypoxemia-severe&patient=" + worsening.patient()))
                .hasSize(1);
        assertThat(api.json("/api/v1/advisories?code=hypoxemia-mild&patient=" + worsening.patient()))
                .isEmpty();
        assertThat(api.json("/api/v1/advisories?status=resolved&patient=" + worsening.patient()))
                .isEmpty();
        String before = worsening.t0().minusSeconds(1).toString();
        String after = worsening.t0().plusSeconds(1).toString();
        assertThat(api.json("/api/v1/advisories?rule=hypoxemia&patient=" + worsening.patient() + "&from=" + before
                        + "&to=" + after))
                .hasSize(1);
        assertThat(api.json("/api/v1/advisories?rule=hypoxemia&patient=" + worsening.patient() + "&from=" + after))
                .isEmpty();
    }

    @Test
    @Order(2)
    void explainsAnEpisodeFromTheAuditAloneWithInputsVersionsValuesFormulasAndParameters() {
        String key = hypoxemiaEpisode(worsening.patient()).path("key").asText();
        JsonNode explained = api.json("/api/v1/advisories/" + key);
        assertThat(explained.path("cautionText").asText()).contains(Cautions.GENERAL);
        assertThat(explained.path("advisoryText").asText()).isNotBlank();
        assertThat(explained.path("sources").toString()).contains("berlin-2012");
        List<JsonNode> evaluations = new ArrayList<>();
        explained.path("evaluations").forEach(evaluations::add);
        assertThat(evaluations)
                .extracting(e -> e.path("evaluation").path("outcome").asText())
                .contains("ONSET", "ESCALATED");
        JsonNode onset = evaluations.stream()
                .filter(e -> e.path("evaluation").path("outcome").asText().equals("ONSET"))
                .findFirst()
                .orElseThrow();
        assertThat(onset.path("evaluation").path("ruleDigest").asText())
                .isEqualTo(catalog.rule("hypoxemia").orElseThrow().digest());
        JsonNode ex = onset.path("explanation");
        // the PaO2 used: its resource id and version, the value after conversion, in the canonical unit
        JsonNode pao2 =
                find(ex.path("measurements"), m -> m.path("kind").asText().equals("PAO2"));
        assertThat("Observation/" + pao2.path("source").path("id").asText()).isEqualTo(worsening.firstPao2());
        assertThat(pao2.path("source").path("version").asText()).isEqualTo("1");
        assertThat(pao2.path("value").asDouble()).isEqualTo(80.0);
        assertThat(pao2.path("unit").asText()).isEqualTo("mm[Hg]");
        // P/F = 80 / 0.50 = 160 (Berlin 2012 moderate band), with the formula id and version
        JsonNode pf = find(ex.path("indices"), i -> i.path("code").asText().equals("PF_RATIO"));
        assertThat(pf.path("value").asDouble()).isCloseTo(160.0, within(1e-9));
        assertThat(pf.path("formula").path("id").asText()).isEqualTo("pf-ratio");
        assertThat(pf.path("formula").path("version").asText()).isNotBlank();
        // every parameter in effect, e.g. Berlin's moderate upper bound
        assertThat(ex.path("parameters").path("pf_moderate_max").asText()).startsWith("200");
        // the Flag writes were queued and are delivered
        assertThat(explained.path("writes")).isNotEmpty();
        await().atMost(Duration.ofSeconds(60))
                .untilAsserted(() -> assertThat(
                                api.json("/api/v1/advisories/" + key).path("writes"))
                        .allSatisfy(w -> assertThat(w.path("status").asText()).isEqualTo("DELIVERED")));
        // one evaluation by id gives the same explanation
        long id = onset.path("evaluation").path("id").asLong();
        assertThat(api.json("/api/v1/evaluations/" + id).path("explanation")).isEqualTo(ex);
    }

    @Test
    @Order(3)
    void listsEvaluationsAndExportsAnyListAsCsv() {
        JsonNode list = api.json("/api/v1/evaluations?rule=hypoxemia&patient=" + worsening.patient());
        assertThat(list).extracting(e -> e.path("outcome").asText()).contains("ONSET", "ESCALATED");
        HttpResponse<String> csv = api.get("/api/v1/advisories?format=csv&patient=" + worsening.patient());
        assertThat(csv.statusCode()).isEqualTo(200);
        assertThat(csv.headers().firstValue("Content-Type"))
                .hasValueSatisfying(v -> assertThat(v).startsWith("text/csv"));
        String[] lines = csv.body().split("\r\n");
        assertThat(lines[0]).startsWith("key,patient,ruleId,ruleVersion,code,status,startedAt");
        assertThat(csv.body()).contains("Patient/" + worsening.patient()).contains("hypoxemia-severe");
        for (String path : List.of(
                "/api/v1/evaluations?format=csv&patient=" + worsening.patient(),
                "/api/v1/quarantine?format=csv",
                "/api/v1/rules?format=csv",
                "/api/v1/indices?format=csv",
                "/api/v1/statistics/firings?format=csv",
                "/api/v1/statistics/rules?format=csv")) {
            HttpResponse<String> r = api.get(path);
            assertThat(r.statusCode()).as(path).isEqualTo(200);
            assertThat(r.body().split("\r\n").length).as(path).isGreaterThan(1);
        }
    }

    @Test
    @Order(4)
    void quarantineListsTheRefusedObservationWithItsReason() {
        JsonNode q = api.json("/api/v1/quarantine?reason=unknown-unit");
        JsonNode entry = find(q, e -> e.path("reference").asText().startsWith(badUnit + "/_history/"));
        assertThat(entry.path("detail").asText()).contains("mmHg");
        assertThat(entry.path("patient").asText()).isEqualTo("Patient/" + worsening.patient());
        assertThat(entry.has("bodyExcerpt")).isFalse();
    }

    @Test
    @Order(5)
    void theRuleAndIndexCatalogsShowDefinitionsParametersSourcesVersionsAndModes() {
        JsonNode rules = api.json("/api/v1/rules");
        assertThat(rules).hasSize(catalog.rules().size());
        JsonNode hypoxemia = api.json("/api/v1/rules/hypoxemia");
        assertThat(hypoxemia.path("version").asText())
                .isEqualTo(catalog.rule("hypoxemia").orElseThrow().version());
        assertThat(hypoxemia.path("mode").asText()).isEqualTo("ACTIVE");
        JsonNode moderate =
                find(hypoxemia.path("parameters"), p -> p.path("name").asText().equals("pf_moderate_max"));
        assertThat(moderate.path("effectiveValue").asText()).isEqualTo("200");
        assertThat(moderate.path("source").asText()).isEqualTo("berlin-2012");
        assertThat(moderate.path("sourceCitation").asText()).isNotBlank();
        assertThat(hypoxemia.path("tiers").toString()).contains("hypoxemia-severe");
        JsonNode indices = api.json("/api/v1/indices");
        JsonNode pf = find(indices, i -> i.path("code").asText().equals("pf-ratio"));
        assertThat(pf.path("loinc").asText()).isEqualTo("50984-4");
        assertThat(pf.path("unit").asText()).isEqualTo("mm[Hg]");
        assertThat(pf.path("formula").asText()).contains("PaO2").contains("FiO2");
        assertThat(api.get("/api/v1/rules/no-such-rule").statusCode()).isEqualTo(404);
    }

    @Test
    @Order(6)
    void statisticsCountFiringsPerRulePerDayPerVentilatedPatientDayAndMedianTimeToResolution() {
        String from = worsening.t0().minus(3, ChronoUnit.DAYS).toString();
        JsonNode stats = api.json("/api/v1/statistics?from=" + from);
        // one invasive-ventilation record per scenario patient: one ventilated patient-day each
        assertThat(stats.path("ventilatedPatientDays").asLong()).isEqualTo(2);
        assertThat(stats.path("howCounted").asText()).contains("ventilated patient-days");
        JsonNode hypoxemia =
                find(stats.path("rules"), r -> r.path("ruleId").asText().equals("hypoxemia"));
        assertThat(hypoxemia.path("onsets").asLong()).isEqualTo(2);
        assertThat(hypoxemia.path("perHundredVentilatedPatientDays").asDouble()).isEqualTo(100.0);
        assertThat(hypoxemia.path("resolved").asLong()).isEqualTo(1);
        // resolve-after 6 h from the last value in a band (the hypoxemia rule's default)
        assertThat(hypoxemia.path("medianHoursOnsetToResolution").asDouble()).isEqualTo(6.0);
        assertThat(stats.path("firingsPerDay").toString()).contains("hypoxemia");
    }

    @Test
    @Order(7)
    void thePatientTimelineCarriesTheIndicesAsEvaluatedAndTheChartedSettings() {
        JsonNode timeline = api.json("/api/v1/patients/" + worsening.patient() + "/timeline");
        JsonNode pf = find(timeline.path("series"), s -> s.path("key").asText().equals("pf-ratio"));
        assertThat(pf.path("points"))
                .extracting(p -> p.path("value").asDouble())
                .contains(160.0, 90.0);
        JsonNode dp = find(timeline.path("series"), s -> s.path("key").asText().equals("driving-pressure"));
        assertThat(dp.path("points"))
                .extracting(p -> p.path("value").asDouble())
                .contains(16.0);
        JsonNode vr = find(timeline.path("series"), s -> s.path("key").asText().equals("ventilatory-ratio"));
        assertThat(vr.path("points").get(0).path("value").asDouble()).isCloseTo(1.63, within(0.01));
        JsonNode fio2 =
                find(timeline.path("series"), s -> s.path("key").asText().equals("fio2"));
        assertThat(fio2.path("points"))
                .extracting(p -> p.path("value").asDouble())
                .contains(50.0);
        assertThat(timeline.path("episodes")).isNotEmpty();
        assertThat(timeline.path("evaluations")).isNotEmpty();
    }

    @Test
    @Order(8)
    void anAdminSwitchesARuleToSilentItIsAuditedAndTheNextEpisodeWritesNoFlag() {
        ApiClient admin = ApiClient.admin(port);
        HttpResponse<String> switched = admin.put(
                "/api/v1/rules/hypoxemia/mode",
                "application/json",
                "{\"mode\":\"silent\",\"reason\":\"tuning thresholds locally\"}");
        assertThat(switched.statusCode()).as(switched.body()).isEqualTo(200);
        assertThat(ApiClient.parse(switched.body()).path("mode").asText()).isEqualTo("SILENT");
        JsonNode changes = api.json("/api/v1/rules/hypoxemia/mode-changes");
        assertThat(changes.get(0).path("changedBy").asText()).isEqualTo("test-admin");
        assertThat(changes.get(0).path("previousMode").asText()).isEqualTo("ACTIVE");
        assertThat(changes.get(0).path("reason").asText()).isEqualTo("tuning thresholds locally");
        try {
            AuditScenario.Made quiet = scenario.moderateOnly(
                    "api-s", Instant.now().minus(5, ChronoUnit.HOURS).truncatedTo(ChronoUnit.MINUTES));
            JsonNode episode = await().atMost(Duration.ofSeconds(60))
                    .until(
                            () -> api.json("/api/v1/advisories?rule=hypoxemia&patient=" + quiet.patient()),
                            l -> l.size() == 1)
                    .get(0);
            assertThat(episode.path("mode").asText()).isEqualTo("SILENT");
            JsonNode explained =
                    api.json("/api/v1/advisories/" + episode.path("key").asText());
            assertThat(explained.path("writes"))
                    .allSatisfy(w -> assertThat(w.path("status").asText()).isEqualTo("SUPPRESSED"));
            // (this instance queued nothing for the record; the shared sandbox's other test contexts, subscribed too,
            // may still write their own Flags for the same Observations, so the server is not asked here)
            assertThat(api.json("/api/v1/evaluations?rule=hypoxemia&patient=" + quiet.patient()))
                    .isNotEmpty()
                    .allSatisfy(e -> assertThat(e.path("mode").asText()).isEqualTo("SILENT"));
        } finally {
            assertThat(admin.put("/api/v1/rules/hypoxemia/mode", "application/json", "{\"mode\":\"active\"}")
                            .statusCode())
                    .isEqualTo(200);
        }
        assertThat(api.json("/api/v1/rules/hypoxemia").path("mode").asText()).isEqualTo("ACTIVE");
    }

    @Test
    @Order(9)
    void theOverviewReportsIntakeAndWriteBackHealth() {
        JsonNode o = api.json("/api/v1/overview");
        assertThat(o.path("lastNotificationAt").isNull()).isFalse();
        assertThat(o.path("quarantineCount").asLong()).isGreaterThanOrEqualTo(1);
        assertThat(o.path("fhirServerStatus").asText()).isEqualTo("UP");
        assertThat(o.path("databaseStatus").asText()).isEqualTo("UP");
        assertThat(o.path("activeAdvisories").asLong()).isGreaterThanOrEqualTo(1);
    }

    @Test
    @Order(10)
    void theOpenApiDocumentDescribesTheAuditApi() {
        JsonNode doc = api.json("/v3/api-docs");
        assertThat(doc.path("openapi").asText()).startsWith("3.");
        assertThat(doc.path("paths").has("/api/v1/advisories")).isTrue();
        assertThat(doc.path("paths").has("/api/v1/advisories/{key}")).isTrue();
        assertThat(doc.path("paths").has("/api/v1/rules/{id}/mode")).isTrue();
        assertThat(doc.path("paths").has("/api/v1/statistics")).isTrue();
        assertThat(doc.path("paths").has("/fhir-hook")).isFalse();
    }

    private static JsonNode find(JsonNode array, java.util.function.Predicate<JsonNode> test) {
        for (JsonNode n : array) {
            if (test.test(n)) {
                return n;
            }
        }
        throw new AssertionError("nothing matched in " + array);
    }
}
