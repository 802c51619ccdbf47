package org.lungflag.service.reliability;

import static org.assertj.core.api.Assertions.assertThat;
import static org.awaitility.Awaitility.await;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.parser.DataFormatException;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.net.http.HttpResponse;
import java.time.Duration;
import java.time.Instant;
import java.time.temporal.ChronoUnit;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.concurrent.atomic.AtomicInteger;
import net.jqwik.api.Arbitraries;
import net.jqwik.api.Arbitrary;
import net.jqwik.api.Combinators;
import net.jqwik.api.ForAll;
import net.jqwik.api.Property;
import net.jqwik.api.Provide;
import net.jqwik.api.ShrinkingMode;
import net.jqwik.api.lifecycle.AfterContainer;
import net.jqwik.api.lifecycle.BeforeContainer;
import org.hl7.fhir.instance.model.api.IBaseResource;
import org.hl7.fhir.r4.model.Observation;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.patient.Sex;
import org.lungflag.service.audit.QuarantineEntry;
import org.lungflag.service.e2e.SandboxServer;
import org.lungflag.service.evaluation.InboxProcessor;
import org.lungflag.service.normalize.NormalizedResource;
import org.lungflag.service.normalize.Normalizer;
import org.lungflag.service.normalize.SpecimenLookup;
import org.lungflag.service.offline.OfflineEvaluation;
import org.springframework.context.ConfigurableApplicationContext;
import org.springframework.jdbc.core.simple.JdbcClient;

/**
 * Bad input, generated (jqwik): Observations built from good and bad parts (known and unknown codes, valid, wrong
 * and unknown UCUM units, ordinary, extreme and overflowing values, arterial, venous and unknown specimens and
 * dangling Specimen references, past, future and malformed dates, subjects that are not Patients or missing, unicode
 * in every string), then possibly broken (fields dropped, the resource type changed, the JSON truncated, nested
 * thousands deep, padded past the body limit). Through the rest-hook: never a 5xx, never a stopped worker, and each
 * input either used or quarantined with a reason and a detail. Through the offline path replay uses (HAPI's parser,
 * the one {@link Normalizer}, {@link OfflineEvaluation}): never an exception other than the parser's refusal, and each
 * input either yields facts or carries a reason. The counts of inputs tried are printed at the end.
 */
class BadInputFuzzTest {

    private static final int MAX_BODY = 262_144;
    private static final List<String> PATIENTS = List.of("fuzz-a", "fuzz-b", "fuzz-c");

    static ConfigurableApplicationContext service;
    static int port;
    static JdbcClient jdbc;
    static final AtomicInteger seq = new AtomicInteger();
    static final Map<String, AtomicInteger> hookOutcomes = new LinkedHashMap<>();
    static final Map<String, AtomicInteger> offlineOutcomes = new LinkedHashMap<>();
    static final ObjectMapper JSON = new ObjectMapper();

    @BeforeContainer
    static void start() {
        port = SandboxServer.freePort();
        service = Harness.service(
                port,
                SandboxServer.server().baseUrl(),
                "--lungflag.evaluation.hydrate=false",
                "--lungflag.intake.max-body-bytes=" + MAX_BODY);
        jdbc = service.getBean(JdbcClient.class);
    }

    @AfterContainer
    static void stop() {
        System.out.printf(
                "bad input: %d inputs through the hook %s; %d through the offline path %s%n",
                total(hookOutcomes), hookOutcomes, total(offlineOutcomes), offlineOutcomes);
        if (service != null) {
            service.close();
        }
    }

    private static int total(Map<String, AtomicInteger> m) {
        return m.values().stream().mapToInt(AtomicInteger::get).sum();
    }

    private static synchronized void count(Map<String, AtomicInteger> m, String outcome) {
        m.computeIfAbsent(outcome, k -> new AtomicInteger()).incrementAndGet();
    }

    /** One generated input: the Observation's id (the hook path's id) and the body. */
    record Input(String id, String body, String how) {
        @Override
        public String toString() {
            return how + " " + (body.length() > 400 ? body.substring(0, 400) + "…(" + body.length() + ")" : body);
        }
    }

    // ---- generators ---------------------------------------------------------------------------------------

    private static Arbitrary<String> weirdText() {
        return Arbitraries.oneOf(
                Arbitraries.strings().all().ofMaxLength(80),
                Arbitraries.of("", " ", "\u0000", "\uD800", "\uFEFF", "👩‍⚕️🫁", "Ωμέγα", "قياس", "測定", "\u202Edlrow"));
    }

    private static Arbitrary<Object> code() {
        return Arbitraries.oneOf(
                Arbitraries.of("2703-7", "2019-8", "2708-6", "19994-3", "76248-4", "8302-2", "2705-2", "59408-5"),
                Arbitraries.of("8867-4", "0000-0"),
                weirdText().map(s -> (Object) s),
                Arbitraries.integers().map(i -> (Object) i));
    }

    private static Arbitrary<String> system() {
        return Arbitraries.oneOf(
                Arbitraries.of("http://loinc.org", "http://loinc.org", "urn:iso:std:iso:11073:10101", "urn:oid:1.2"),
                weirdText());
    }

    private static Arbitrary<Object> unit() {
        return Arbitraries.oneOf(
                Arbitraries.of("mm[Hg]", "kPa", "%", "1", "cm[H2O]", "cm", "mL", "mmHg", "kg/m2", "[in_i]", "Cel"),
                Arbitraries.of("", "furlong", "mm[Hg]/", "10*", "%%"),
                weirdText().map(s -> (Object) s));
    }

    private static Arbitrary<Object> value() {
        Arbitrary<Object> plausible = Arbitraries.of(45.0, 80.0, 0.21, 0.5, 1.0, 10.0, 21.0, 41.0, 100.0, 175.0)
                .map(d -> (Object) d);
        return Arbitraries.oneOf(
                plausible,
                plausible,
                plausible,
                Arbitraries.doubles().between(-1e6, 1e6).map(d -> (Object) d),
                Arbitraries.of(0.0, -0.0, 45.0, 80.0, 0.21, 0.5, 1.0, 21.0, 100.0, 175.0)
                        .map(d -> (Object) d),
                Arbitraries.of(Double.MAX_VALUE, -Double.MAX_VALUE, Double.MIN_VALUE, 1e300, -1e300)
                        .map(d -> (Object) d),
                Arbitraries.bigDecimals()
                        .between(new java.math.BigDecimal("-1e400"), new java.math.BigDecimal("1e400"))
                        .map(b -> (Object) b),
                Arbitraries.of("NaN", "Infinity", "-Infinity", "1e400", "", "eighty")
                        .map(s -> (Object) s),
                Arbitraries.longs().map(l -> (Object) l));
    }

    private static Arbitrary<Object> dateTime() {
        Instant now = Instant.now();
        return Arbitraries.oneOf(
                Arbitraries.integers().between(0, 60 * 47).map(m ->
                        (Object) now.minus(m, ChronoUnit.MINUTES).toString()),
                Arbitraries.integers().between(1, 400 * 24).map(h ->
                        (Object) now.plus(h, ChronoUnit.HOURS).toString()),
                Arbitraries.of(
                                "9999-12-31T23:59:59Z",
                                "0001-01-01T00:00:00Z",
                                "2026",
                                "2026-02-30T10:00:00Z",
                                "2026-12-01T25:61:00Z",
                                "yesterday",
                                "2026-12-01T10:00:00",
                                "")
                        .map(s -> (Object) s),
                weirdText().map(s -> (Object) s));
    }

    private static Arbitrary<Object> subject() {
        return Arbitraries.oneOf(
                Arbitraries.of(PATIENTS).map(p -> (Object) Map.of("reference", "Patient/" + p)),
                Arbitraries.of("Group/ward-3", "Device/vent-1", "Patient/", "#contained", "http://elsewhere/Patient/x")
                        .map(r -> (Object) Map.of("reference", r)),
                weirdText().map(s -> (Object) Map.of("reference", "Patient/" + s)),
                Arbitraries.just((Object) Map.of("display", "no reference")));
    }

    private static Arbitrary<Object> specimen() {
        return Arbitraries.oneOf(
                Arbitraries.of("Specimen/does-not-exist", "Specimen/", "Specimen/ab?c=1", "Patient/not-a-specimen")
                        .map(r -> (Object) Map.of("reference", r)),
                weirdText().map(s -> (Object) Map.of("reference", "Specimen/" + s)),
                Arbitraries.just((Object) Map.of("display", "arterial")));
    }

    /** A code, system, unit and value that belong together (clinical-reference §11 codes, UCUM units). */
    private static Arbitrary<Object[]> coherent() {
        return Arbitraries.of(
                        new Object[] {"2703-7", "mm[Hg]", 80.0},
                        new Object[] {"2703-7", "kPa", 10.7},
                        new Object[] {"2019-8", "mm[Hg]", 41.0},
                        new Object[] {"19994-3", "1", 0.5},
                        new Object[] {"19994-3", "%", 50.0},
                        new Object[] {"76248-4", "cm[H2O]", 10.0},
                        new Object[] {"8302-2", "cm", 175.0},
                        new Object[] {"2708-6", "%", 94.0})
                .flatMap(c -> weirdText().map(text -> new Object[] {c[0], "http://loinc.org", c[1], c[2], text}));
    }

    @Provide
    Arbitrary<Input> inputs() {
        Instant now = Instant.now();
        Arbitrary<Object[]> parts = Arbitraries.frequencyOf(
                net.jqwik.api.Tuple.of(1, coherent()),
                net.jqwik.api.Tuple.of(
                        2,
                        Combinators.combine(code(), system(), unit(), value(), weirdText())
                                .as((c, s, u, v, text) -> new Object[] {c, s, u, v, text})));
        Arbitrary<Object> goodTime = Arbitraries.integers().between(0, 60 * 40).map(m ->
                (Object) now.minus(m, ChronoUnit.MINUTES).toString());
        Arbitrary<Map<String, Object>> observation = Combinators.combine(
                        parts,
                        Arbitraries.frequencyOf(
                                net.jqwik.api.Tuple.of(1, goodTime), net.jqwik.api.Tuple.of(1, dateTime())),
                        Arbitraries.frequencyOf(
                                net.jqwik.api.Tuple.of(
                                        2, Arbitraries.of(PATIENTS).map(p ->
                                                (Object) Map.of("reference", "Patient/" + p))),
                                net.jqwik.api.Tuple.of(1, subject())),
                        Arbitraries.oneOf(specimen(), Arbitraries.just(null), Arbitraries.just(null)),
                        Arbitraries.of("final", "final", "amended", "preliminary", "entered-in-error", "bogus"),
                        weirdText())
                .as((part, when, subject, specimen, status, note) -> {
                    Map<String, Object> o = new LinkedHashMap<>();
                    o.put("resourceType", "Observation");
                    o.put("status", status);
                    Map<String, Object> coding = new LinkedHashMap<>();
                    coding.put("system", part[1]);
                    coding.put("code", part[0]);
                    coding.put("display", part[4]);
                    o.put("code", Map.of("coding", List.of(coding), "text", part[4]));
                    o.put("subject", subject);
                    o.put("effectiveDateTime", when);
                    Map<String, Object> q = new LinkedHashMap<>();
                    q.put("value", part[3]);
                    q.put("unit", part[4]);
                    q.put("system", "http://unitsofmeasure.org");
                    q.put("code", part[2]);
                    o.put("valueQuantity", q);
                    if (specimen != null) {
                        o.put("specimen", specimen);
                    }
                    o.put("note", List.of(Map.of("text", note)));
                    return o;
                });
        Arbitrary<String> breakage = Arbitraries.frequencyOf(
                net.jqwik.api.Tuple.of(8, Arbitraries.just("as-built")),
                net.jqwik.api.Tuple.of(3, Arbitraries.just("drop-fields")),
                net.jqwik.api.Tuple.of(2, Arbitraries.just("wrong-type")),
                net.jqwik.api.Tuple.of(2, Arbitraries.just("truncated")),
                net.jqwik.api.Tuple.of(1, Arbitraries.just("deep")),
                net.jqwik.api.Tuple.of(1, Arbitraries.just("huge")),
                net.jqwik.api.Tuple.of(1, Arbitraries.just("not-json")),
                net.jqwik.api.Tuple.of(1, Arbitraries.just("contained")),
                net.jqwik.api.Tuple.of(1, Arbitraries.just("bad-path-id")),
                net.jqwik.api.Tuple.of(1, Arbitraries.just("bad-version-id")));
        return Combinators.combine(
                        observation,
                        breakage,
                        Arbitraries.integers().between(0, Integer.MAX_VALUE),
                        Arbitraries.of("Patient", "Bundle", "Flag", "Observaton", "", "OperationOutcome"))
                .as((o, how, r, type) -> {
                    String id = "fz" + seq.incrementAndGet();
                    Map<String, Object> m = new LinkedHashMap<>(o);
                    m.put("id", id);
                    m.put("meta", Map.of("versionId", "1"));
                    String body;
                    switch (how) {
                        case "drop-fields" -> {
                            List<String> keys = new ArrayList<>(
                                    List.of("status", "code", "subject", "effectiveDateTime", "valueQuantity"));
                            int drop = 1 + r % keys.size();
                            for (int i = 0; i < drop; i++) {
                                m.remove(keys.get((r / (i + 1)) % keys.size()));
                            }
                            body = write(m);
                        }
                        case "wrong-type" -> {
                            m.put("resourceType", type);
                            body = write(m);
                        }
                        case "truncated" -> {
                            String full = write(m);
                            body = full.substring(0, r % Math.max(1, full.length()));
                        }
                        case "deep" -> {
                            int depth = 50 + r % 5000;
                            StringBuilder nested = new StringBuilder();
                            nested.append("{\"url\":\"http://x\",\"extension\":[".repeat(depth));
                            nested.append("{\"url\":\"http://x\",\"valueString\":\"bottom\"}");
                            nested.append("]}".repeat(depth));
                            String full = write(m);
                            body = full.substring(0, full.length() - 1) + ",\"extension\":[" + nested + "]}";
                        }
                        case "huge" -> {
                            m.put("note", List.of(Map.of("text", "x".repeat(MAX_BODY / 2 + r % MAX_BODY))));
                            body = write(m);
                        }
                        case "not-json" ->
                            body = List.of("", "null", "[]", "42", "<Observation/>", "{", "{}", "\"x\"")
                                    .get(r % 8);
                        case "bad-path-id" -> {
                            // an id no FHIR server assigns: too long, or characters outside the id syntax
                            String bad = List.of("x".repeat(65 + r % 200), "has%20space", "%C3%A9t%C3%A9", "a_b", "a:b")
                                    .get(r % 5);
                            m.put("id", java.net.URLDecoder.decode(bad, java.nio.charset.StandardCharsets.UTF_8));
                            return new Input(bad, write(m), how);
                        }
                        case "bad-version-id" -> {
                            m.put("meta", Map.of("versionId", "v".repeat(65 + r % 100)));
                            body = write(m);
                        }
                        case "contained" -> {
                            Map<String, Object> inner = new LinkedHashMap<>(m);
                            inner.put("id", "inner");
                            m.put("contained", List.of(inner, inner));
                            body = write(m);
                        }
                        default -> body = write(m);
                    }
                    return new Input(id, body, how);
                });
    }

    private static String write(Map<String, Object> m) {
        try {
            return JSON.writeValueAsString(m);
        } catch (Exception e) {
            throw new IllegalStateException(e);
        }
    }

    // ---- properties ---------------------------------------------------------------------------------------

    @Property(tries = 400, shrinking = ShrinkingMode.BOUNDED)
    void theHookNeverAnswers5xxAndEveryInputIsUsedOrQuarantinedWithAReason(@ForAll("inputs") Input input) {
        HttpResponse<String> r = Harness.deliverJson(port, input.id(), input.body());
        assertThat(r.statusCode()).as("hook answer").isLessThan(500);
        if (r.statusCode() >= 400) {
            // refused at the door: a FHIR OperationOutcome that says what was wrong, and a quarantine entry
            assertThat(r.body()).contains("OperationOutcome").contains("diagnostics");
            assertThat(quarantined(input))
                    .as("quarantine entries of a refused input")
                    .isNotEmpty()
                    .allSatisfy(q -> {
                        assertThat(q.reasonCode()).isNotBlank();
                        assertThat(q.detail()).isNotBlank();
                    });
            count(hookOutcomes, "refused-" + r.statusCode());
            return;
        }
        assertThat(r.statusCode()).isEqualTo(200);
        List<String> outcomes = await().atMost(Duration.ofSeconds(60))
                .pollInterval(Duration.ofMillis(20))
                .until(
                        () -> jdbc.sql("SELECT outcome FROM received_resource WHERE resource_id = :id")
                                .param("id", input.id())
                                .query(String.class)
                                .list(),
                        list -> !list.isEmpty());
        String outcome = outcomes.get(0);
        if (!outcome.equals("USED") && !outcome.equals("RETRACTED") && !outcome.equals("DUPLICATE")) {
            assertThat(quarantined(input))
                    .as("quarantine entries of an input that was %s", outcome)
                    .isNotEmpty()
                    .allSatisfy(q -> {
                        assertThat(q.reasonCode()).isNotBlank();
                        assertThat(q.detail()).isNotBlank();
                    });
        }
        assertThat(service.getBean(InboxProcessor.class).isRunning())
                .as("the inbox worker")
                .isTrue();
        count(hookOutcomes, "accepted-" + outcome.toLowerCase());
    }

    private static List<QuarantineEntry> quarantined(Input input) {
        return jdbc.sql("SELECT * FROM quarantine WHERE resource_id = :id OR body_sha256 = :sha")
                .param("id", input.id())
                .param("sha", org.lungflag.service.intake.InboxRepository.sha256(input.body()))
                .query((rs, n) -> new QuarantineEntry(
                        rs.getLong("id"),
                        org.lungflag.service.audit.QuarantineStage.valueOf(rs.getString("stage")),
                        rs.getString("resource_type"),
                        rs.getString("resource_id"),
                        rs.getString("version_id"),
                        rs.getString("patient_id"),
                        rs.getString("reason_code"),
                        rs.getString("detail"),
                        rs.getString("server_outcome"),
                        rs.getString("body_sha256"),
                        rs.getString("body_excerpt"),
                        rs.getTimestamp("created_at").toInstant()))
                .list();
    }

    @Property(tries = 1000, shrinking = ShrinkingMode.BOUNDED)
    void theOfflinePathNeverThrowsAndEveryInputYieldsFactsOrAReason(@ForAll("inputs") Input input) throws Exception {
        FhirContext fhir = service.getBean(FhirContext.class);
        IBaseResource parsed;
        try {
            parsed = fhir.newJsonParser().parseResource(input.body());
        } catch (DataFormatException e) {
            assertThat(e.getMessage()).isNotBlank();
            count(offlineOutcomes, "refused-unparseable");
            return;
        }
        if (!(parsed instanceof Observation obs)) {
            count(offlineOutcomes, "refused-" + parsed.fhirType());
            return;
        }
        Normalizer normalizer = service.getBean(Normalizer.class);
        NormalizedResource r = normalizer.normalize(obs, Instant.now(), SpecimenLookup.NONE);
        if (r.retracted()) {
            count(offlineOutcomes, "retracted");
            return;
        }
        r.refusals().forEach(refusal -> {
            assertThat(refusal.reason()).isNotNull();
            assertThat(refusal.detail()).isNotBlank();
        });
        assertThat(!r.facts().isEmpty() || !r.refusals().isEmpty())
                .as("facts or a reason")
                .isTrue();
        if (r.patientId() != null) {
            OfflineEvaluation offline = service.getBean(OfflineEvaluation.class);
            offline.run(
                    new PatientFacts(r.patientId(), Sex.MALE, java.time.LocalDate.of(1960, 1, 1)), List.of(r), null);
        }
        count(
                offlineOutcomes,
                r.facts().isEmpty() ? "quarantined" : r.refusals().isEmpty() ? "used" : "partly-used");
    }
}
