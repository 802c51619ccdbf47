package org.lungflag.service.reliability;

import static org.assertj.core.api.Assertions.assertThat;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.rest.client.api.IGenericClient;
import ca.uhn.fhir.rest.client.api.ServerValidationModeEnum;
import java.io.IOException;
import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.time.Duration;
import java.time.Instant;
import java.time.temporal.ChronoUnit;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.UUID;
import org.hl7.fhir.r4.model.Bundle;
import org.hl7.fhir.r4.model.Enumerations.AdministrativeGender;
import org.hl7.fhir.r4.model.Flag;
import org.hl7.fhir.r4.model.Observation;
import org.hl7.fhir.r4.model.Provenance;
import org.hl7.fhir.r4.model.Reference;
import org.lungflag.fhir.profiles.LungflagFhir;
import org.lungflag.rules.engine.RuleEvaluation;
import org.lungflag.service.LungflagApplication;
import org.lungflag.service.e2e.FhirFixtures;
import org.lungflag.service.e2e.SandboxServer;
import org.lungflag.service.normalize.FhirSpecimenLookup;
import org.lungflag.service.normalize.NormalizedResource;
import org.lungflag.service.normalize.Normalizer;
import org.lungflag.service.offline.OfflineEvaluation;
import org.lungflag.service.offline.PatientRun;
import org.lungflag.service.patient.PatientDirectory;
import org.lungflag.service.testsupport.FirstCatchUp;
import org.springframework.boot.builder.SpringApplicationBuilder;
import org.springframework.context.ConfigurableApplicationContext;
import org.springframework.jdbc.core.simple.JdbcClient;

/**
 * What the fault tests share: a client straight to the embedded FHIR server, a service instance in its own Spring
 * context, the test playing the FHIR server's rest-hook delivery (so a test decides what is delivered, when, how
 * often and in which order, and what is lost), and the checks "nothing lost, nothing twice".
 *
 * <p>Clinical values from the Berlin definition (ARDS Definition Task Force, JAMA 2012, clinical-reference §2.2
 * [PUB-2]): PaO2 80 mmHg at FiO2 0.50 with PEEP 10 cmH2O is P/F 160, the moderate band (100 < P/F ≤ 200); PaO2 45 at
 * FiO2 0.50 is P/F 90, severe (P/F ≤ 100); PaO2 100 at FiO2 0.30 is P/F 333, above the mild band's 300. Patients and
 * records are invented.
 */
public final class Harness {

    static final String TOKEN = "test-hook-token";
    static final FhirContext FHIR = fhirContext();
    static final IGenericClient SERVER =
            FHIR.newRestfulGenericClient(SandboxServer.server().baseUrl());
    private static final HttpClient HTTP =
            HttpClient.newBuilder().connectTimeout(Duration.ofSeconds(5)).build();

    private Harness() {}

    private static FhirContext fhirContext() {
        FhirContext ctx = FhirContext.forR4();
        ctx.getParserOptions().setStripVersionsFromReferences(false);
        ctx.getRestfulClientFactory().setServerValidationMode(ServerValidationModeEnum.NEVER);
        ctx.getRestfulClientFactory().setSocketTimeout(60_000);
        return ctx;
    }

    /**
     * A service instance in its own context ("test" profile, so the hook token is {@link #TOKEN}), with short
     * delivery backoff and no Subscriptions: the test delivers. {@code args} override or add settings.
     */
    static ConfigurableApplicationContext service(int port, String fhirBaseUrl, String... args) {
        List<String> all = new ArrayList<>(List.of(
                "--server.port=" + port,
                "--lungflag.fhir.base-url=" + fhirBaseUrl,
                "--lungflag.intake.public-url=http://127.0.0.1:" + port,
                "--lungflag.intake.register-subscriptions=false",
                "--lungflag.intake.catch-up-interval=1h",
                // the first catch-up search looks back one second only: the shared server holds other tests' data
                "--lungflag.intake.catch-up-initial-look-back=1s",
                "--lungflag.evaluation.advance-interval=1h",
                "--lungflag.evaluation.poll-interval=100ms",
                "--lungflag.writeback.poll-interval=200ms",
                "--lungflag.writeback.initial-backoff=200ms",
                "--lungflag.writeback.max-backoff=2s",
                "--lungflag.writeback.lease=15s",
                "--lungflag.metrics.refresh=1s"));
        all.addAll(List.of(args));
        ConfigurableApplicationContext context = new SpringApplicationBuilder(LungflagApplication.class)
                .profiles("test")
                .run(all.toArray(String[]::new));
        awaitFirstCatchUp(context);
        return context;
    }

    /** See {@link FirstCatchUp}. */
    public static void awaitFirstCatchUp(ConfigurableApplicationContext context) {
        FirstCatchUp.await(context);
    }

    static String newPatient(String prefix) {
        String id = prefix + "-" + UUID.randomUUID().toString().substring(0, 8);
        SERVER.update()
                .resource(FhirFixtures.patient(id, AdministrativeGender.MALE, "1961-04-02"))
                .execute();
        return id;
    }

    /** Creates the Observation on the server and returns it as stored (id and version assigned). */
    static Observation create(Observation o) {
        String id = SERVER.create().resource(o).execute().getId().getIdPart();
        return SERVER.read().resource(Observation.class).withId(id).execute();
    }

    /**
     * One invented ventilated adult's records around {@code t0}, in clinical order: height 175 cm, invasive
     * ventilation, FiO2 0.50 and PEEP 10 before each gas; PaO2 80 at t0 (P/F 160, moderate), 45 at t0+2 h (P/F 90,
     * severe), then 100 at FiO2 0.30 at t0+4 h and t0+11 h (P/F 333, no band: resolves after 6 h).
     */
    static List<Observation> ventilatedCourse(String p, Instant t0, boolean withResolution) {
        List<Observation> out = new ArrayList<>();
        out.add(FhirFixtures.loinc(p, "8302-2", 175, "cm", t0.minus(2, ChronoUnit.HOURS)));
        out.add(FhirFixtures.support(p, "invasive-ventilation", t0.minus(90, ChronoUnit.MINUTES)));
        out.add(FhirFixtures.setting(p, "19994-3", 0.5, "1", t0.minus(40, ChronoUnit.MINUTES)));
        out.add(FhirFixtures.setting(p, "76248-4", 10, "cm[H2O]", t0.minus(40, ChronoUnit.MINUTES)));
        out.add(FhirFixtures.loinc(p, "2703-7", 80, "mm[Hg]", t0));
        out.add(FhirFixtures.setting(p, "19994-3", 0.5, "1", t0.plus(100, ChronoUnit.MINUTES)));
        out.add(FhirFixtures.setting(p, "76248-4", 10, "cm[H2O]", t0.plus(100, ChronoUnit.MINUTES)));
        out.add(FhirFixtures.loinc(p, "2703-7", 45, "mm[Hg]", t0.plus(2, ChronoUnit.HOURS)));
        if (withResolution) {
            for (int h : new int[] {4, 11}) {
                Instant at = t0.plus(h, ChronoUnit.HOURS);
                out.add(FhirFixtures.setting(p, "19994-3", 0.3, "1", at.minus(30, ChronoUnit.MINUTES)));
                out.add(FhirFixtures.setting(p, "76248-4", 8, "cm[H2O]", at.minus(30, ChronoUnit.MINUTES)));
                out.add(FhirFixtures.loinc(p, "2703-7", 100, "mm[Hg]", at));
            }
        }
        return out;
    }

    /** The rest-hook call HAPI makes for a payload Subscription: PUT {endpoint}/Observation/{id}. */
    static int deliver(int port, Observation o) {
        return deliverJson(
                        port, o.getIdElement().getIdPart(), FHIR.newJsonParser().encodeResourceToString(o))
                .statusCode();
    }

    static HttpResponse<String> deliverJson(int port, String id, String body) {
        try {
            return HTTP.send(
                    HttpRequest.newBuilder(URI.create("http://127.0.0.1:" + port + "/fhir-hook/Observation/" + id))
                            .timeout(Duration.ofSeconds(60))
                            .header("Authorization", "Bearer " + TOKEN)
                            .header("Content-Type", "application/fhir+json")
                            .PUT(HttpRequest.BodyPublishers.ofString(body))
                            .build(),
                    HttpResponse.BodyHandlers.ofString());
        } catch (IOException e) {
            throw new java.io.UncheckedIOException(e);
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            throw new IllegalStateException(e);
        }
    }

    static HttpResponse<String> get(int port, String path) {
        try {
            return HTTP.send(
                    HttpRequest.newBuilder(URI.create("http://127.0.0.1:" + port + path))
                            .timeout(Duration.ofSeconds(60))
                            .build(),
                    HttpResponse.BodyHandlers.ofString());
        } catch (IOException e) {
            throw new java.io.UncheckedIOException(e);
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            throw new IllegalStateException(e);
        }
    }

    static long count(JdbcClient jdbc, String sql) {
        return jdbc.sql(sql).query(Long.class).single();
    }

    static boolean settled(JdbcClient jdbc) {
        return count(jdbc, "SELECT COUNT(*) FROM intake_inbox WHERE status <> 'DONE'") == 0
                && count(jdbc, "SELECT COUNT(*) FROM outbox WHERE status IN ('PENDING', 'SENDING')") == 0;
    }

    /** Resource ids the service recorded as received for the patient. */
    static List<String> receivedIds(JdbcClient jdbc, String patientId) {
        return jdbc.sql("SELECT DISTINCT resource_id FROM received_resource WHERE patient_id = :p")
                .param("p", patientId)
                .query(String.class)
                .list();
    }

    static List<Flag> flagsOf(String patientId) {
        Bundle bundle = SERVER.search()
                .forResource(Flag.class)
                .where(Flag.PATIENT.hasId("Patient/" + patientId))
                .and(Flag.IDENTIFIER.hasSystemWithAnyCode(LungflagFhir.Identifiers.ADVISORY_EPISODE))
                .count(100)
                .returnBundle(Bundle.class)
                .execute();
        return bundle.getEntry().stream().map(e -> (Flag) e.getResource()).toList();
    }

    /**
     * Nothing twice on the server: one Flag per episode identifier, and never two Provenance for one Flag version
     * (the deliverer writes one per new Flag version; a retried write that changed nothing adds none). With {@code
     * everyVersion} (no withdrawal expected) every version must have exactly one.
     */
    static void assertOneFlagPerEpisodeAndOneProvenancePerVersion(String patientId, boolean everyVersion) {
        List<Flag> flags = flagsOf(patientId);
        assertThat(flags.stream().map(f -> f.getIdentifierFirstRep().getValue()))
                .as("Flag identifiers of Patient/%s", patientId)
                .doesNotHaveDuplicates();
        for (Flag flag : flags) {
            String id = flag.getIdElement().getIdPart();
            int versions = Integer.parseInt(flag.getMeta().getVersionId());
            Bundle provenance = SERVER.search()
                    .forResource(Provenance.class)
                    .where(Provenance.TARGET.hasId("Flag/" + id))
                    .count(100)
                    .returnBundle(Bundle.class)
                    .execute();
            Map<String, Integer> perVersion = new HashMap<>();
            for (Bundle.BundleEntryComponent e : provenance.getEntry()) {
                for (Reference target : ((Provenance) e.getResource()).getTarget()) {
                    perVersion.merge(target.getReference(), 1, Integer::sum);
                }
            }
            // none twice, each targets a version the Flag has, and the current version has its Provenance (a
            // withdrawal, entered-in-error, is written without one)
            assertThat(perVersion.values())
                    .as("Provenance per version of Flag/%s", id)
                    .allMatch(n -> n == 1);
            List<String> history = new ArrayList<>();
            for (int v = 1; v <= versions; v++) {
                history.add("Flag/" + id + "/_history/" + v);
            }
            assertThat(history).as("versions of Flag/%s", id).containsAll(perVersion.keySet());
            if (everyVersion) {
                assertThat(perVersion.keySet())
                        .as("versions of Flag/%s with a Provenance", id)
                        .containsExactlyInAnyOrderElementsOf(history);
            } else if (flag.getStatus() != Flag.FlagStatus.ENTEREDINERROR) {
                assertThat(perVersion).containsKey("Flag/" + id + "/_history/" + versions);
            }
        }
    }

    /** "identifier code status" of each Flag that stands (withdrawn ones excluded). */
    static List<String> standing(List<Flag> flags) {
        return flags.stream()
                .filter(f -> f.getStatus() != Flag.FlagStatus.ENTEREDINERROR)
                .map(f -> f.getIdentifierFirstRep().getValue() + " "
                        + f.getCode().getCodingFirstRep().getCode() + " "
                        + f.getStatus().toCode())
                .toList();
    }

    /** What one evaluator computes from the same records ({@link OfflineEvaluation}, the path replay uses). */
    static PatientRun offline(ConfigurableApplicationContext ctx, String patientId, List<Observation> records)
            throws Exception {
        Normalizer normalizer = ctx.getBean(Normalizer.class);
        FhirSpecimenLookup specimens = new FhirSpecimenLookup(SERVER);
        List<NormalizedResource> resources = new ArrayList<>();
        for (Observation o : records) {
            resources.add(normalizer.normalize(o, Instant.now(), specimens));
        }
        return ctx.getBean(OfflineEvaluation.class)
                .run(ctx.getBean(PatientDirectory.class).facts(patientId), resources, null);
    }

    static List<String> offlineStanding(ConfigurableApplicationContext ctx, PatientRun run) {
        return standing(ctx.getBean(OfflineEvaluation.class).flags(run, "live"));
    }

    /** What two evaluations must share to be the same one. */
    public record Row(String rule, Instant at, String outcome, String tier, String reason, String episode) {
        static Row of(RuleEvaluation e) {
            return new Row(
                    e.ruleId(),
                    e.at(),
                    e.outcome().name(),
                    e.tier(),
                    e.reason() == null ? null : e.reason().code(),
                    e.episode() == null ? null : e.episode().key());
        }

        /** The same without the episode key (which contains the patient id), to compare two patients. */
        Row anonymous() {
            return new Row(rule, at, outcome, tier, reason, episode == null ? null : "episode");
        }
    }

    public static List<Row> liveEvaluations(JdbcClient jdbc, String patientId) {
        return jdbc.sql("""
                        SELECT rule_id, anchor_time, outcome, tier_code, reason_code, episode_key FROM evaluation
                         WHERE patient_id = :p AND NOT superseded
                        """)
                .param("p", patientId)
                .query((rs, n) -> new Row(
                        rs.getString(1),
                        rs.getTimestamp(2).toInstant(),
                        rs.getString(3),
                        rs.getString(4),
                        rs.getString(5),
                        rs.getString(6)))
                .list();
    }

    public static List<Row> offlineEvaluations(PatientRun run) {
        return run.evaluations().stream().map(Row::of).toList();
    }
}
