package org.lungflag.service.e2e;

import static org.assertj.core.api.Assertions.assertThat;
import static org.awaitility.Awaitility.await;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.rest.api.CacheControlDirective;
import ca.uhn.fhir.rest.client.api.IGenericClient;
import ca.uhn.fhir.rest.client.api.ServerValidationModeEnum;
import java.io.PrintStream;
import java.net.URI;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.stream.Collectors;
import org.hl7.fhir.r4.model.Bundle;
import org.hl7.fhir.r4.model.Flag;
import org.hl7.fhir.r4.model.Provenance;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.Test;
import org.lungflag.fhir.profiles.LungflagFhir;
import org.lungflag.sandbox.fhirserver.SandboxFhirServer;
import org.lungflag.sandbox.fhirserver.SandboxOptions;
import org.lungflag.sandbox.player.PlayOptions;
import org.lungflag.sandbox.player.PlayResult;
import org.lungflag.sandbox.player.ScenarioPlayer;
import org.lungflag.sandbox.scenario.DemoScenario;
import org.lungflag.service.intake.SubscriptionRegistrar;
import org.springframework.beans.factory.annotation.Autowired;
import org.springframework.boot.test.context.SpringBootTest;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.test.annotation.DirtiesContext;
import org.springframework.test.context.ActiveProfiles;
import org.springframework.test.context.DynamicPropertyRegistry;
import org.springframework.test.context.DynamicPropertySource;

/**
 * The whole demo scenario, played at full speed into a real FHIR server (a private embedded HAPI JPA server, so
 * only this service's Subscriptions see it) with the live service subscribed: every advisory the scenario's
 * {@code expected-advisories.csv} lists appears by patient, tier and approximate clinical hour (from the service's
 * audit), each episode has exactly one Flag on the server with its Provenance, no patient has two active Flags for
 * one advisory, the data-quality cases are not evaluable with the expected reason or repaired, and the child is
 * evaluated on the pediatric bands only. The expectations are derived from the design of each invented course
 * (published definitions named in the catalog: Berlin 2012, PROSEVA, ARDSNet, Amato 2015, PALICC-2, Sinha 2009).
 */
@SpringBootTest(webEnvironment = SpringBootTest.WebEnvironment.DEFINED_PORT)
@ActiveProfiles("test")
@DirtiesContext(classMode = DirtiesContext.ClassMode.AFTER_CLASS)
class DemoScenarioLiveTest {

    private static SandboxFhirServer server;

    @DynamicPropertySource
    static void sandbox(DynamicPropertyRegistry registry) {
        server = SandboxFhirServer.start(SandboxOptions.inMemory());
        int port = SandboxServer.freePort();
        registry.add("lungflag.fhir.base-url", server::baseUrl);
        registry.add("server.port", () -> port);
        registry.add("lungflag.intake.public-url", () -> "http://127.0.0.1:" + port);
        registry.add("lungflag.intake.register-subscriptions", () -> "true");
        registry.add("lungflag.intake.catch-up-interval", () -> "1h");
        // the played data lie in the wall clock's past; the clock advance is tested elsewhere
        registry.add("lungflag.evaluation.advance-interval", () -> "1h");
    }

    @AfterAll
    static void stopServer() {
        if (server != null) {
            server.close();
        }
    }

    @Autowired
    SubscriptionRegistrar registrar;

    @Autowired
    JdbcClient jdbc;

    @Test
    void theDemoScenarioRaisesTheExpectedAdvisoriesWithProvenanceAndNoDuplicates() throws Exception {
        await().atMost(Duration.ofSeconds(90)).until(registrar::registered);
        FhirContext ctx = server.fhirContext();
        ctx.getRestfulClientFactory().setServerValidationMode(ServerValidationModeEnum.NEVER);
        IGenericClient fhir = ctx.newRestfulGenericClient(server.baseUrl());
        await().atMost(Duration.ofSeconds(60)).until(() -> {
            Bundle subs = fhir.search()
                    .byUrl("Subscription?status=active")
                    .returnBundle(Bundle.class)
                    .execute();
            return subs.getEntry().size() == 4;
        });

        DemoScenario scenario = DemoScenario.load();
        long started = System.nanoTime();
        PlayResult played = new ScenarioPlayer(ctx, scenario)
                .play(
                        PlayOptions.defaults(URI.create(server.baseUrl())).withSpeed(PlayOptions.FULL_SPEED),
                        new PrintStream(System.out, true));
        awaitQuiet();
        System.out.printf(
                "demo scenario live: %d resources posted in %d s, all written after %d s%n",
                played.resourcesPosted(),
                played.wallTime().toSeconds(),
                Duration.ofNanos(System.nanoTime() - started).toSeconds());
        Instant hourZero = played.clinicalStart();

        List<DemoScenarioChecks.Evaluation> evaluations = jdbc.sql("""
                        SELECT patient_id, rule_id, outcome, tier_code, reason_code, anchor_time FROM evaluation
                         WHERE superseded = FALSE AND patient_id LIKE 'demo-%' ORDER BY anchor_time, id
                        """)
                .query((rs, n) -> new DemoScenarioChecks.Evaluation(
                        rs.getString(1),
                        rs.getString(2),
                        rs.getString(3),
                        rs.getString(4),
                        rs.getString(5),
                        hours(
                                hourZero,
                                rs.getObject(6, java.time.OffsetDateTime.class).toInstant())))
                .list();
        record StoredEpisode(
                String key,
                String patient,
                String rule,
                String code,
                String status,
                Instant start,
                Instant end,
                String flagId) {}
        List<StoredEpisode> stored = jdbc.sql("""
                        SELECT episode_key, patient_id, rule_id, code, status, started_at, ended_at, flag_id FROM episode
                         WHERE patient_id LIKE 'demo-%' AND status <> 'ENTERED_IN_ERROR'
                         ORDER BY patient_id, rule_id, started_at
                        """)
                // an episode withdrawn by a re-run (the rest of a charting moment arrived after its first part, as
                // HAPI delivers each Subscription's notifications on its own threads) is history, not an advisory:
                // the comparison is with what stands once everything has arrived (design invariant 2)
                .query((rs, n) -> new StoredEpisode(
                        rs.getString(1),
                        rs.getString(2),
                        rs.getString(3),
                        rs.getString(4),
                        rs.getString(5),
                        rs.getObject(6, java.time.OffsetDateTime.class).toInstant(),
                        rs.getObject(7, java.time.OffsetDateTime.class) == null
                                ? null
                                : rs.getObject(7, java.time.OffsetDateTime.class)
                                        .toInstant(),
                        rs.getString(8)))
                .list();
        List<DemoScenarioChecks.Episode> episodes = new ArrayList<>();
        for (StoredEpisode e : stored) {
            List<DemoScenarioChecks.TierAt> history = jdbc.sql("""
                            SELECT tier_code, anchor_time FROM evaluation
                             WHERE episode_key = :key AND superseded = FALSE
                               AND outcome IN ('ONSET', 'ESCALATED', 'DE_ESCALATED') ORDER BY anchor_time, id
                            """)
                    .param("key", e.key())
                    .query((rs, n) -> new DemoScenarioChecks.TierAt(
                            rs.getString(1),
                            hours(
                                    hourZero,
                                    rs.getObject(2, java.time.OffsetDateTime.class)
                                            .toInstant())))
                    .list();
            episodes.add(new DemoScenarioChecks.Episode(
                    e.patient(),
                    e.rule(),
                    hours(hourZero, e.start()),
                    e.code(),
                    "ACTIVE".equals(e.status()),
                    e.end() == null ? null : hours(hourZero, e.end()),
                    history));
        }
        List<DemoScenarioChecks.Repair> repairs = jdbc.sql("""
                        SELECT patient_id, repairs, clinical_time FROM normalized_value
                         WHERE repairs IS NOT NULL AND patient_id LIKE 'demo-%'
                        """)
                .query((rs, n) -> new DemoScenarioChecks.Repair(
                        rs.getString(1),
                        rs.getString(2).contains("fio2-fraction-charted-as-percent")
                                ? "fio2-fraction-charted-as-percent"
                                : rs.getString(2),
                        hours(
                                hourZero,
                                rs.getObject(3, java.time.OffsetDateTime.class).toInstant())))
                .list();
        episodes.forEach(ep -> System.out.println(
                "live episode " + ep.patient() + " " + ep.rule() + ": " + DemoScenarioChecks.describe(ep)));
        assertThat(DemoScenarioChecks.mismatches(scenario.expectations(), evaluations, episodes, repairs))
                .as("the live service against expected-advisories.csv")
                .isEmpty();

        // nothing of the scenario was refused: its data-quality cases are in the values
        assertThat(jdbc.sql("SELECT COUNT(*) FROM quarantine WHERE patient_id LIKE 'demo-%'")
                        .query(Long.class)
                        .single())
                .isZero();
        // the child is evaluated, on the pediatric rule
        assertThat(evaluations)
                .filteredOn(v -> v.patient().equals("demo-06"))
                .extracting(DemoScenarioChecks.Evaluation::rule)
                .contains("pediatric-hypoxemia")
                .doesNotContain("hypoxemia", "prone-criteria-met", "tidal-volume-high", "driving-pressure-high");

        // on the FHIR server: one Flag per episode, with its Provenance; never two active Flags for one advisory
        List<Flag> flags = new ArrayList<>();
        Bundle page = fhir.search()
                .forResource(Flag.class)
                .count(200)
                .cacheControl(new CacheControlDirective().setNoCache(true))
                .returnBundle(Bundle.class)
                .execute();
        page.getEntry().forEach(e -> flags.add((Flag) e.getResource()));
        // a withdrawn episode's Flag, if it had been written before the re-run, stays as entered-in-error
        long withdrawn = jdbc.sql(
                        "SELECT COUNT(*) FROM episode WHERE patient_id LIKE 'demo-%' AND status = 'ENTERED_IN_ERROR'")
                .query(Long.class)
                .single();
        assertThat(flags.stream().filter(f -> f.getStatus() == Flag.FlagStatus.ENTEREDINERROR))
                .hasSizeLessThanOrEqualTo((int) withdrawn);
        flags.removeIf(f -> f.getStatus() == Flag.FlagStatus.ENTEREDINERROR);
        assertThat(flags).hasSize(stored.size());
        Map<String, Flag> byIdentifier = new LinkedHashMap<>();
        flags.forEach(f -> byIdentifier.put(f.getIdentifierFirstRep().getValue(), f));
        for (StoredEpisode e : stored) {
            Flag flag = byIdentifier.get(e.key());
            assertThat(flag)
                    .as("Flag of episode %s (%s %s)", e.key(), e.patient(), e.rule())
                    .isNotNull();
            assertThat(flag.getIdentifierFirstRep().getSystem()).isEqualTo(LungflagFhir.Identifiers.ADVISORY_EPISODE);
            assertThat(flag.getSubject().getReference()).isEqualTo("Patient/" + e.patient());
            assertThat(flag.getCode().getCodingFirstRep().getCode()).isEqualTo(e.code());
            assertThat(flag.getStatus())
                    .isEqualTo("ACTIVE".equals(e.status()) ? Flag.FlagStatus.ACTIVE : Flag.FlagStatus.INACTIVE);
            assertThat(flag.getExtensionByUrl(LungflagFhir.Extensions.ADVISORY_BASIS)
                            .getValue()
                            .primitiveValue())
                    .isNotBlank();
            assertThat(flag.getExtensionByUrl(LungflagFhir.Extensions.ADVISORY_CAUTION)
                            .getValue()
                            .primitiveValue())
                    .isNotBlank();
            Bundle provenance = fhir.search()
                    .forResource(Provenance.class)
                    .where(Provenance.TARGET.hasId(
                            flag.getIdElement().toUnqualifiedVersionless().getValue()))
                    .cacheControl(new CacheControlDirective().setNoCache(true))
                    .returnBundle(Bundle.class)
                    .execute();
            assertThat(provenance.getEntry())
                    .as("Provenance of %s", flag.getIdElement().toUnqualifiedVersionless())
                    .isNotEmpty()
                    .allSatisfy(entry -> {
                        Provenance p = (Provenance) entry.getResource();
                        assertThat(p.getPolicy().get(0).getValue())
                                .startsWith(LungflagFhir.RULE_CANONICAL_BASE + e.rule() + "|");
                        assertThat(p.getAgentFirstRep().getWho().getReference()).isEqualTo("Device/lungflag");
                        assertThat(p.getEntity())
                                .isNotEmpty()
                                .allSatisfy(en ->
                                        assertThat(en.getWhat().getReference()).contains("/_history/"));
                    });
        }
        Map<String, Long> activePerAdvisory = flags.stream()
                .filter(f -> f.getStatus() == Flag.FlagStatus.ACTIVE)
                .collect(Collectors.groupingBy(
                        f -> f.getSubject().getReference() + " "
                                + f.getExtensionByUrl(LungflagFhir.Extensions.ADVISORY_RULE)
                                        .getExtensionString("id"),
                        Collectors.counting()));
        assertThat(activePerAdvisory)
                .allSatisfy((key, count) -> assertThat(count).as(key).isEqualTo(1L));
    }

    /** Until nothing waits in the inbox or outbox for three polls in a row. */
    private void awaitQuiet() {
        int[] quiet = {0};
        try {
            awaitQuiet(quiet);
        } catch (org.awaitility.core.ConditionTimeoutException e) {
            // say what was still waiting, so a timeout in CI can be diagnosed from its log
            throw new AssertionError(
                    "still waiting after 10 minutes: outbox "
                            + jdbc.sql("SELECT id, patient_id, episode_key, kind, status, attempts, next_attempt_at,"
                                            + " last_error FROM outbox WHERE status IN ('PENDING', 'SENDING')")
                                    .query()
                                    .listOfRows()
                            + "; inbox not done: "
                            + jdbc.sql("SELECT COUNT(*) FROM intake_inbox WHERE status <> 'DONE'")
                                    .query(Long.class)
                                    .single(),
                    e);
        }
    }

    private void awaitQuiet(int[] quiet) {
        await().atMost(Duration.ofMinutes(10))
                .pollInterval(Duration.ofSeconds(2))
                .until(() -> {
                    long waiting = jdbc.sql("SELECT COUNT(*) FROM intake_inbox WHERE status <> 'DONE'")
                                    .query(Long.class)
                                    .single()
                            + jdbc.sql("SELECT COUNT(*) FROM outbox WHERE status IN ('PENDING', 'SENDING')")
                                    .query(Long.class)
                                    .single();
                    quiet[0] = waiting == 0 ? quiet[0] + 1 : 0;
                    return quiet[0] >= 3;
                });
    }

    private static double hours(Instant hourZero, Instant at) {
        return Duration.between(hourZero, at).toSeconds() / 3600.0;
    }
}
