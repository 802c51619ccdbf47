package org.lungflag.service.reliability.bench;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.parser.IParser;
import ca.uhn.fhir.rest.client.api.IGenericClient;
import ca.uhn.fhir.rest.client.api.ServerValidationModeEnum;
import java.io.IOException;
import java.io.PrintStream;
import java.lang.management.ManagementFactory;
import java.net.ServerSocket;
import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.nio.file.Files;
import java.nio.file.Path;
import java.sql.Timestamp;
import java.time.Duration;
import java.time.Instant;
import java.time.LocalDate;
import java.time.temporal.ChronoUnit;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.Date;
import java.util.HashMap;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.UUID;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicInteger;
import java.util.concurrent.locks.LockSupport;
import org.hl7.fhir.r4.model.Bundle;
import org.hl7.fhir.r4.model.CodeableConcept;
import org.hl7.fhir.r4.model.Coding;
import org.hl7.fhir.r4.model.DateTimeType;
import org.hl7.fhir.r4.model.DateType;
import org.hl7.fhir.r4.model.Enumerations.AdministrativeGender;
import org.hl7.fhir.r4.model.Observation;
import org.hl7.fhir.r4.model.Patient;
import org.hl7.fhir.r4.model.Quantity;
import org.hl7.fhir.r4.model.Reference;
import org.lungflag.fhir.profiles.LungflagFhir;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.patient.Sex;
import org.lungflag.service.LungflagApplication;
import org.lungflag.service.normalize.NormalizedResource;
import org.lungflag.service.normalize.Normalizer;
import org.lungflag.service.normalize.SpecimenLookup;
import org.lungflag.service.offline.OfflineEvaluation;
import org.lungflag.service.testsupport.FirstCatchUp;
import org.springframework.boot.builder.SpringApplicationBuilder;
import org.springframework.context.ConfigurableApplicationContext;
import org.springframework.jdbc.core.simple.JdbcClient;

/**
 * Load benchmark (figures, not a test): offers Observations to the rest-hook at rising rates, as a FHIR server's
 * payload Subscriptions would, with write-back of the Flags to a real FHIR server, and prints per rate the sustained
 * throughput to audit commit, p50/p99 from receipt to commit and from receipt to the Flag written, the load average,
 * then the heap with every patient tracked, and the evaluation path against bare HAPI JSON parsing of the same
 * Observations in the same run. See README "Reliability and benchmarks" for the command.
 *
 * <p>The invented load: {@code patients} ventilated adults (2,000 by default), each sent a height, the support mode,
 * then cycles of FiO2 0.50, PEEP 10 cmH2O, PaO2 and PaCO2 ten clinical minutes apart, round-robin over the patients
 * (so each patient's records arrive in clinical order). One patient in ten gets PaO2 80 mmHg at one cycle (P/F 160,
 * the Berlin 2012 moderate band, clinical-reference §2.2 [PUB-2]): one onset Flag each, spread over the run; the
 * others get PaO2 180 (P/F 360, no band).
 *
 * <p>The warm-up (not reported as a step) sends every patient's first record before anything else, at least {@code
 * patients} Observations at the first rate or 200/s if that is higher, so the measured steps run with every patient
 * already tracked, as the heap figure says; what a patient's first sight costs (reading their demographics) shows in
 * the warm-up line instead.
 */
public final class HookLoadBenchmark {

    /** Options; see {@link #parse}. */
    public record Options(
            String fhirBaseUrl,
            List<String> databases,
            int[] rates,
            int seconds,
            int patients,
            int senders,
            boolean writeBack,
            Duration drainLimit,
            int warmupSeconds) {}

    /** One step's figures. */
    public record Step(
            String database,
            int offeredRate,
            int offered,
            int acknowledged,
            int refused,
            double sendRate,
            double commitRate,
            long p50CommitMs,
            long p99CommitMs,
            int flags,
            long p50FlagMs,
            long p99FlagMs,
            double drainSeconds,
            String loadAverage,
            CpuPerObservation cpu) {}

    /**
     * CPU time the service's threads spent per Observation of a step (from the step's first send until it drained),
     * in microseconds: the rest-hook's request threads, the inbox thread, and the scheduler threads (outbox delivery,
     * clock, metrics). Unlike throughput it hardly depends on what else the machine runs, so it tells what the service
     * could do with the machine to itself: the one inbox thread at most {@code 1e6 / inbox} per second, all service
     * threads together at most {@code cores * 1e6 / total}.
     */
    public record CpuPerObservation(double hook, double inbox, double scheduling) {
        double total() {
            return hook + inbox + scheduling;
        }

        double inboxBound() {
            return inbox <= 0 ? Double.NaN : 1e6 / inbox;
        }

        double machineBound(int cores) {
            return total() <= 0 ? Double.NaN : cores * 1e6 / total();
        }
    }

    /** CPU nanoseconds used so far by the service's threads, by role. */
    private static Map<String, Long> serviceCpu() {
        java.lang.management.ThreadMXBean threads = ManagementFactory.getThreadMXBean();
        Map<String, Long> out = new HashMap<>(Map.of("hook", 0L, "inbox", 0L, "scheduling", 0L));
        for (java.lang.management.ThreadInfo info : threads.getThreadInfo(threads.getAllThreadIds())) {
            if (info == null) {
                continue;
            }
            String name = info.getThreadName();
            String role = name.startsWith("http-nio-") && name.contains("-exec-")
                    ? "hook"
                    : name.equals("lungflag-inbox") ? "inbox" : name.startsWith("scheduling-") ? "scheduling" : null;
            long cpu = threads.getThreadCpuTime(info.getThreadId());
            if (role != null && cpu > 0) {
                out.merge(role, cpu, Long::sum);
            }
        }
        return out;
    }

    private static CpuPerObservation cpuPerObservation(Map<String, Long> before, Map<String, Long> after, int n) {
        java.util.function.ToDoubleFunction<String> per = role -> (after.get(role) - before.get(role)) / 1e3 / n;
        return new CpuPerObservation(
                per.applyAsDouble("hook"), per.applyAsDouble("inbox"), per.applyAsDouble("scheduling"));
    }

    /** Everything one database's run measured. */
    public record Result(
            String database,
            List<Step> steps,
            int committed,
            int offered,
            long heapUsedBytes,
            long heapBaselineBytes,
            int patientsTracked) {}

    private static final String HOOK_TOKEN = "bench-hook-token";
    private final Options options;
    private final PrintStream out;
    private final FhirContext fhir;

    public HookLoadBenchmark(Options options, PrintStream out) {
        this.options = options;
        this.out = out;
        this.fhir = FhirContext.forR4();
        fhir.getParserOptions().setStripVersionsFromReferences(false);
        fhir.getRestfulClientFactory().setServerValidationMode(ServerValidationModeEnum.NEVER);
        fhir.getRestfulClientFactory().setSocketTimeout(120_000);
    }

    public static void main(String[] args) throws Exception {
        HookLoadBenchmark bench;
        try {
            bench = new HookLoadBenchmark(parse(args), System.out);
            bench.requireBloodGases();
        } catch (IllegalArgumentException e) {
            System.err.println(e.getMessage()); // the options: one line, nothing was started
            System.exit(2);
            return;
        }
        try {
            bench.runAll();
        } catch (Exception | Error e) {
            e.printStackTrace();
            System.exit(1); // the services' non-daemon threads would keep the JVM alive
        }
        System.exit(0);
    }

    static Options parse(String[] args) {
        Map<String, String> a = new HashMap<>();
        for (int i = 0; i + 1 < args.length; i += 2) {
            a.put(args[i].replaceFirst("^--", ""), args[i + 1]);
        }
        if (!a.containsKey("fhir")) {
            throw new IllegalArgumentException("usage: HookLoadBenchmark --fhir BASE_URL [--db h2,postgres|none]"
                    + " [--rates 100,200,500,1000,2000] [--seconds 10] [--patients 2000] [--senders 48]"
                    + " [--write-back true] [--warmup-seconds 10]");
        }
        return new Options(
                a.get("fhir"),
                List.of(a.getOrDefault("db", "h2,postgres").split(",")),
                Arrays.stream(a.getOrDefault("rates", "100,200,500,1000,2000").split(","))
                        .mapToInt(Integer::parseInt)
                        .toArray(),
                Integer.parseInt(a.getOrDefault("seconds", "10")),
                Integer.parseInt(a.getOrDefault("patients", "2000")),
                Integer.parseInt(a.getOrDefault("senders", "48")),
                Boolean.parseBoolean(a.getOrDefault("write-back", "true")),
                Duration.ofSeconds(Long.parseLong(a.getOrDefault("drain-limit", "180"))),
                Integer.parseInt(a.getOrDefault("warmup-seconds", "10")));
    }

    public List<Result> runAll() throws Exception {
        String run = UUID.randomUUID().toString().substring(0, 6);
        List<String> patientIds = new ArrayList<>();
        for (int i = 0; i < options.patients(); i++) {
            patientIds.add("load-" + run + "-" + i);
        }
        requireBloodGases();
        int total = totalCount();
        createPatients(patientIds);
        List<Sent> load = generate(run, patientIds, total);
        if (options.writeBack()) {
            // the Flags cite the records they were computed from, and the server refuses references to what it does
            // not hold: the patients who get a Flag (one in ten) have their records created on the server first
            createObservations(load.stream().filter(Sent::flagging).toList());
        }
        List<Result> results = new ArrayList<>();
        for (String db : options.databases()) {
            if (db.equals("none")) {
                continue; // --db none: only the floors below
            }
            results.add(runOne(db, run + db.charAt(0), patientIds, load));
        }
        floors(load.subList(0, Math.min(load.size(), 40_000)));
        return results;
    }

    /** The same Observations on the FHIR server, as a server whose Subscriptions notify would hold them. */
    private void createObservations(List<Sent> load) {
        IGenericClient client = fhir.newRestfulGenericClient(options.fhirBaseUrl());
        var parser = fhir.newJsonParser();
        long t = System.nanoTime();
        for (int from = 0; from < load.size(); from += 250) {
            Bundle tx = new Bundle().setType(Bundle.BundleType.TRANSACTION);
            for (Sent s : load.subList(from, Math.min(load.size(), from + 250))) {
                Observation o = parser.parseResource(Observation.class, s.body());
                tx.addEntry()
                        .setResource(o)
                        .getRequest()
                        .setMethod(Bundle.HTTPVerb.PUT)
                        .setUrl("Observation/" + s.id());
            }
            client.transaction().withBundle(tx).execute();
        }
        out.printf(
                Locale.ROOT,
                "created the %d Observations on the FHIR server in %.0f s (before the runs, not measured)%n",
                load.size(),
                (System.nanoTime() - t) / 1e9);
    }

    private void createPatients(List<String> ids) {
        IGenericClient client = fhir.newRestfulGenericClient(options.fhirBaseUrl());
        for (int from = 0; from < ids.size(); from += 200) {
            Bundle tx = new Bundle().setType(Bundle.BundleType.TRANSACTION);
            for (String id : ids.subList(from, Math.min(ids.size(), from + 200))) {
                Patient p = new Patient();
                p.setId(id);
                p.setGender(AdministrativeGender.MALE);
                p.setBirthDateElement(new DateType("1958-06-01"));
                tx.addEntry()
                        .setResource(p)
                        .getRequest()
                        .setMethod(Bundle.HTTPVerb.PUT)
                        .setUrl("Patient/" + id);
            }
            client.transaction().withBundle(tx).execute();
        }
        out.printf("created %d invented Patients on %s%n", ids.size(), options.fhirBaseUrl());
    }

    // ---- the load -------------------------------------------------------------------------------------------

    /** The i-th record of a patient (0: height, 1: support, then cycles of 4). */
    private Observation record(String patientId, int patientIndex, int k, Instant base, String id) {
        Instant at = base.plus(10L * k, ChronoUnit.MINUTES);
        Observation o = new Observation();
        o.setId(id);
        o.getMeta().setVersionId("1");
        o.setStatus(Observation.ObservationStatus.FINAL);
        o.setSubject(new Reference("Patient/" + patientId));
        o.setEffective(new DateTimeType(Date.from(at)));
        if (k == 0) {
            return quantity(o, "8302-2", 175, "cm", false);
        }
        if (k == 1) {
            o.setCode(
                    new CodeableConcept(new Coding(LungflagFhir.CodeSystems.INPUT_KIND, "respiratory-support", null)));
            o.setValue(new CodeableConcept(
                    new Coding(LungflagFhir.CodeSystems.RESPIRATORY_SUPPORT, "invasive-ventilation", null)));
            return o;
        }
        int cycle = (k - 2) / 4;
        return switch ((k - 2) % 4) {
            case 0 -> quantity(o, "19994-3", 0.5, "1", true);
            case 1 -> quantity(o, "76248-4", 10, "cm[H2O]", true);
            case 2 -> quantity(o, "2703-7", flagging(patientIndex, cycle) ? 80 : 180, "mm[Hg]", false);
            default -> quantity(o, "2019-8", 41, "mm[Hg]", false);
        };
    }

    /** One patient in ten reaches the moderate band, each at a cycle of its own (then stays there). */
    private static boolean flagging(int patientIndex, int cycle) {
        return patientIndex % 10 == 0 && cycle >= (patientIndex / 10) % 4;
    }

    private static Observation quantity(Observation o, String loinc, double value, String ucum, boolean setting) {
        o.setCode(new CodeableConcept(new Coding(LungflagFhir.CodeSystems.LOINC, loinc, null)));
        o.setValue(new Quantity()
                .setValue(value)
                .setSystem(LungflagFhir.CodeSystems.UCUM)
                .setCode(ucum));
        if (setting) {
            o.addCategory(new CodeableConcept(new Coding(LungflagFhir.CodeSystems.VALUE_ROLE, "setting", null)));
        }
        return o;
    }

    /** One notification body; {@code triggerOf} names the patient whose onset this blood gas is. */
    private record Sent(String id, String body, String triggerOf, boolean flagging) {}

    /** Every Observation of a run: the warm-up's, then each rate for its seconds. */
    private int totalCount() {
        return warmupCount()
                + Arrays.stream(options.rates()).map(r -> r * options.seconds()).sum();
    }

    /**
     * Refuses options under which no patient gets a blood gas: a patient's first PaO2 is their fifth record, so with
     * fewer nothing would be evaluated or flagged.
     */
    void requireBloodGases() {
        int total = totalCount();
        if (total < 5L * options.patients()) {
            throw new IllegalArgumentException(String.format(
                    Locale.ROOT,
                    "%d Observations over %d patients is fewer than 5 each, so no patient would get a blood gas and"
                            + " nothing would be evaluated; raise --rates or --seconds, or lower --patients (at"
                            + " least %d Observations in all)",
                    total,
                    options.patients(),
                    5L * options.patients()));
        }
    }

    /** The warm-up's Observations: the first rate for the warm-up seconds, and at least one per patient. */
    private int warmupCount() {
        return options.warmupSeconds() <= 0
                ? 0
                : Math.max(options.rates()[0] * options.warmupSeconds(), options.patients());
    }

    private List<Sent> generate(String run, List<String> patients, int total) {
        // clinical times: 10 min apart per patient, ending before now, inside the 48 h window
        int perPatient = (total + patients.size() - 1) / patients.size();
        Instant base =
                Instant.now().minus(10L * perPatient + 60, ChronoUnit.MINUTES).truncatedTo(ChronoUnit.MINUTES);
        List<Sent> sent = new ArrayList<>(total);
        var parser = fhir.newJsonParser();
        // patients in blocks of up to 100, each block's records round-robin over its patients: every step of the
        // run carries blood gases (and so evaluations), and each patient's records arrive in clinical order
        int group = Math.min(100, patients.size());
        // every patient's first record first (the warm-up sends them), then the rest block by block
        int firstK = options.warmupSeconds() > 0 ? 1 : 0;
        if (firstK == 1) {
            for (int p = 0; p < patients.size() && sent.size() < total; p++) {
                sent.add(sent(run, patients, p, 0, base, parser));
            }
        }
        for (int block = 0; block * group < patients.size() && sent.size() < total; block++) {
            int first = block * group;
            int size = Math.min(group, patients.size() - first);
            for (int k = firstK; k < perPatient && sent.size() < total; k++) {
                for (int q = 0; q < size && sent.size() < total; q++) {
                    sent.add(sent(run, patients, first + q, k, base, parser));
                }
            }
        }
        return sent;
    }

    /** The k-th record of patient p as a notification body. */
    private Sent sent(String run, List<String> patients, int p, int k, Instant base, IParser parser) {
        String id = "ld-" + run + "-" + p + "-" + k;
        boolean trigger = k >= 2 && (k - 2) % 4 == 2 && p % 10 == 0 && (k - 2) / 4 == (p / 10) % 4;
        return new Sent(
                id,
                parser.encodeResourceToString(record(patients.get(p), p, k, base, id)),
                trigger ? patients.get(p) : null,
                p % 10 == 0);
    }

    private Result runOne(String db, String run, List<String> patients, List<Sent> load) throws Exception {
        int total = load.size();
        System.gc();
        long baseline = usedHeapAfterGc();
        int port = freePort();
        List<String> args = new ArrayList<>(List.of(
                "--server.port=" + port,
                "--server.tomcat.threads.max=64",
                "--lungflag.fhir.base-url=" + options.fhirBaseUrl(),
                "--lungflag.intake.hook-token=" + HOOK_TOKEN,
                "--lungflag.intake.public-url=http://127.0.0.1:" + port,
                "--lungflag.intake.register-subscriptions=false",
                "--lungflag.intake.catch-up-interval=1h",
                "--lungflag.intake.catch-up-initial-look-back=1s",
                // the Observations created on the FHIR server for the Flags' references must not come in through the
                // first catch-up as well: they would be processed before their notification, and the latencies
                // below would pair a notification with work done from the catch-up copy
                "--lungflag.intake.catch-up-overlap=0s",
                "--lungflag.evaluation.hydrate=false",
                "--lungflag.evaluation.advance-interval=1h",
                "--lungflag.writeback.mode=" + (options.writeBack() ? "flags" : "silent"),
                "--logging.level.org.lungflag=WARN",
                "--logging.level.ca.uhn.fhir=WARN"));
        Path h2 = null;
        String schema = null;
        if (db.equals("h2")) {
            h2 = Files.createTempDirectory("lungflag-bench");
            args.add("--spring.datasource.url=jdbc:h2:file:" + h2.resolve("lungflag")
                    + ";MODE=PostgreSQL;DATABASE_TO_LOWER=TRUE;DEFAULT_NULL_ORDERING=HIGH;AUTO_SERVER=FALSE"
                    + (H2_STATEMENTS > 0 ? ";QUERY_STATISTICS=TRUE;QUERY_STATISTICS_MAX_ENTRIES=500" : ""));
        } else {
            schema = "lf_bench_" + run;
            args.add("--spring.datasource.url=jdbc:postgresql://127.0.0.1:5432/test?currentSchema=" + schema);
            args.add("--spring.datasource.username=postgres");
            args.add("--spring.datasource.password=");
            args.add("--spring.flyway.schemas=" + schema);
            args.add("--spring.flyway.create-schemas=true");
        }
        ConfigurableApplicationContext service =
                new SpringApplicationBuilder(LungflagApplication.class).run(args.toArray(String[]::new));
        FirstCatchUp.await(service);
        List<Step> steps = new ArrayList<>();
        long heap;
        int committed;
        try {
            JdbcClient jdbc = service.getBean(JdbcClient.class);
            HttpClient http = HttpClient.newBuilder()
                    .connectTimeout(Duration.ofSeconds(5))
                    .executor(Executors.newFixedThreadPool(4))
                    .build();
            ExecutorService senders = Executors.newFixedThreadPool(options.senders());
            int from = 0;
            if (options.warmupSeconds() > 0) { // JIT, validator and connection pools warm up; not reported
                int n = warmupCount();
                step(db + "/warm", Math.max(options.rates()[0], 200), load.subList(0, n), port, http, senders, jdbc);
                from = n;
            }
            for (int rate : options.rates()) {
                int n = rate * options.seconds();
                steps.add(step(db, rate, load.subList(from, from + n), port, http, senders, jdbc));
                from += n;
            }
            senders.shutdown();
            // what the hook received (the service's own catch-up search may queue records of the shared server too)
            committed = (int)
                    count(jdbc, "SELECT COUNT(*) FROM intake_inbox WHERE status = 'DONE' AND channel = 'REST_HOOK'");
            heap = usedHeapAfterGc();
            if (h2 != null && H2_STATEMENTS > 0) {
                printCostliestStatements(jdbc);
            }
        } finally {
            service.close();
            if (schema != null) {
                JdbcClient.create(new org.springframework.jdbc.datasource.DriverManagerDataSource(
                                "jdbc:postgresql://127.0.0.1:5432/test", "postgres", ""))
                        .sql("DROP SCHEMA IF EXISTS " + schema + " CASCADE")
                        .update();
            }
        }
        Result result = new Result(db, steps, committed, total, heap, baseline, patients.size());
        print(result);
        return result;
    }

    private Step step(
            String db, int rate, List<Sent> batch, int port, HttpClient http, ExecutorService senders, JdbcClient jdbc)
            throws Exception {
        AtomicInteger ok = new AtomicInteger();
        AtomicInteger refused = new AtomicInteger();
        Map<String, Long> cpuBefore = serviceCpu();
        long t0 = System.nanoTime();
        long interval = 1_000_000_000L / rate;
        List<java.util.concurrent.Future<?>> futures = new ArrayList<>(batch.size());
        for (int i = 0; i < batch.size(); i++) {
            long due = t0 + i * interval;
            long wait = due - System.nanoTime();
            if (wait > 0) {
                LockSupport.parkNanos(wait);
            }
            Sent s = batch.get(i);
            futures.add(senders.submit(() -> {
                try {
                    HttpResponse<Void> r = http.send(
                            HttpRequest.newBuilder(
                                            URI.create("http://127.0.0.1:" + port + "/fhir-hook/Observation/" + s.id()))
                                    .timeout(Duration.ofSeconds(60))
                                    .header("Authorization", "Bearer " + HOOK_TOKEN)
                                    .header("Content-Type", "application/fhir+json")
                                    .PUT(HttpRequest.BodyPublishers.ofString(s.body()))
                                    .build(),
                            HttpResponse.BodyHandlers.discarding());
                    (r.statusCode() == 200 ? ok : refused).incrementAndGet();
                } catch (IOException | InterruptedException e) {
                    refused.incrementAndGet();
                }
            }));
        }
        for (var f : futures) {
            f.get();
        }
        double sendSeconds = (System.nanoTime() - t0) / 1e9;
        String load = loadAverage();
        // wait for the inbox and (with write-back) the outbox to drain
        long drainStart = System.nanoTime();
        long limit = options.drainLimit().toNanos();
        while (System.nanoTime() - drainStart < limit
                && (count(jdbc, "SELECT COUNT(*) FROM intake_inbox WHERE status IN ('NEW', 'CLAIMED')") > 0
                        || (options.writeBack()
                                && count(jdbc, "SELECT COUNT(*) FROM outbox WHERE status IN ('PENDING','SENDING')")
                                        > 0))) {
            Thread.sleep(500);
        }
        double drain = (System.nanoTime() - drainStart) / 1e9;
        CpuPerObservation cpu = cpuPerObservation(cpuBefore, serviceCpu(), batch.size());
        List<String> ids = batch.stream().map(Sent::id).toList();
        // receipt to commit, per row, on the service's clock
        List<Long> commit = new ArrayList<>();
        Instant firstReceived = null;
        Instant lastProcessed = null;
        for (int from = 0; from < ids.size(); from += 1000) {
            List<Object[]> rows = jdbc.sql(
                            "SELECT received_at, processed_at FROM intake_inbox WHERE resource_id IN (:ids)"
                                    + " AND status = 'DONE' AND channel = 'REST_HOOK'")
                    .param("ids", ids.subList(from, Math.min(ids.size(), from + 1000)))
                    .query((rs, n) -> new Object[] {rs.getTimestamp(1), rs.getTimestamp(2)})
                    .list();
            for (Object[] r : rows) {
                Instant rec = ((Timestamp) r[0]).toInstant();
                Instant done = ((Timestamp) r[1]).toInstant();
                commit.add(Duration.between(rec, done).toMillis());
                firstReceived = firstReceived == null || rec.isBefore(firstReceived) ? rec : firstReceived;
                lastProcessed = lastProcessed == null || done.isAfter(lastProcessed) ? done : lastProcessed;
            }
        }
        double commitSpan = firstReceived == null
                ? Double.NaN
                : Math.max(Duration.between(firstReceived, lastProcessed).toMillis() / 1000.0, options.seconds() / 2.0);
        // receipt of the blood gas that started an episode to its Flag written on the FHIR server
        List<Long> flag = new ArrayList<>();
        if (options.writeBack()) {
            Map<String, String> triggers = new HashMap<>(); // trigger Observation id -> patient
            for (Sent sent : batch) {
                if (sent.triggerOf() != null) {
                    triggers.put(sent.id(), sent.triggerOf());
                }
            }
            if (!triggers.isEmpty()) {
                Map<String, Instant> received = new HashMap<>();
                jdbc.sql("SELECT resource_id, received_at FROM intake_inbox WHERE resource_id IN (:ids)"
                                + " AND channel = 'REST_HOOK'")
                        .param("ids", List.copyOf(triggers.keySet()))
                        .query((rs, n) -> received.put(
                                triggers.get(rs.getString(1)),
                                rs.getTimestamp(2).toInstant()))
                        .list();
                jdbc.sql("SELECT patient_id, MIN(delivered_at) FROM outbox WHERE kind = 'FLAG'"
                                + " AND status = 'DELIVERED' AND patient_id IN (:patients) GROUP BY patient_id")
                        .param("patients", List.copyOf(triggers.values()))
                        .query((rs, n) -> {
                            Instant at = received.get(rs.getString(1));
                            if (at != null && rs.getTimestamp(2) != null) {
                                flag.add(Duration.between(at, rs.getTimestamp(2).toInstant())
                                        .toMillis());
                            }
                            return at;
                        })
                        .list();
            }
        }
        Step s = new Step(
                db,
                rate,
                batch.size(),
                ok.get(),
                refused.get(),
                batch.size() / sendSeconds,
                commit.size() / commitSpan,
                percentile(commit, 50),
                percentile(commit, 99),
                flag.size(),
                percentile(flag, 50),
                percentile(flag, 99),
                drain,
                load,
                cpu);
        out.printf(
                Locale.ROOT,
                "%-8s offered %5d/s: sent %6.0f/s, acked %d, refused %d, committed %6.0f/s, receipt->commit p50 %d ms"
                        + " p99 %d ms, Flags %d receipt->written p50 %d ms p99 %d ms, drained in %.1f s, load %s%n",
                db,
                rate,
                s.sendRate(),
                s.acknowledged(),
                s.refused(),
                s.commitRate(),
                s.p50CommitMs(),
                s.p99CommitMs(),
                s.flags(),
                s.p50FlagMs(),
                s.p99FlagMs(),
                s.drainSeconds(),
                s.loadAverage());
        int cores = Runtime.getRuntime().availableProcessors();
        out.printf(
                Locale.ROOT,
                "%-8s   service CPU per Observation: hook %.0f us, inbox %.0f us, scheduler %.0f us; with the machine to"
                        + " itself the inbox thread allows at most %.0f/s, all service threads on %d cores at most %.0f/s%n",
                db,
                cpu.hook(),
                cpu.inbox(),
                cpu.scheduling(),
                cpu.inboxBound(),
                cores,
                cpu.machineBound(cores));
        return s;
    }

    // ---- the floors -----------------------------------------------------------------------------------------

    /**
     * The evaluation path in one thread without HTTP or a database (HAPI parse, the one normalizer, the same
     * evaluator through {@link OfflineEvaluation}) against HAPI parsing alone, over the same Observation bodies.
     */
    private void floors(List<Sent> load) throws Exception {
        ConfigurableApplicationContext ctx;
        int port = freePort();
        ctx = new SpringApplicationBuilder(LungflagApplication.class)
                .run(
                        "--server.port=" + port,
                        "--spring.datasource.url=jdbc:h2:mem:floor;MODE=PostgreSQL;DATABASE_TO_LOWER=TRUE;DEFAULT_NULL_ORDERING=HIGH",
                        "--lungflag.fhir.base-url=" + options.fhirBaseUrl(),
                        "--lungflag.intake.hook-token=" + HOOK_TOKEN,
                        "--lungflag.intake.register-subscriptions=false",
                        "--lungflag.intake.catch-up-initial-look-back=1s",
                        "--lungflag.evaluation.processor-enabled=false",
                        "--logging.level.org.lungflag=WARN");
        try {
            FhirContext serviceFhir = ctx.getBean(FhirContext.class);
            Normalizer normalizer = ctx.getBean(Normalizer.class);
            OfflineEvaluation offline = ctx.getBean(OfflineEvaluation.class);
            double parse = 0;
            double eval = 0;
            // per CPU second of this thread as well: other processes on a shared machine move it less than wall time
            java.lang.management.ThreadMXBean cpu = ManagementFactory.getThreadMXBean();
            double parseCpu = 0;
            double evalCpu = 0;
            for (int round = 0;
                    round < Integer.getInteger("floor.rounds", 4);
                    round++) { // the first rounds warm the JIT; keep the best
                long t = System.nanoTime();
                long c = cpu.getCurrentThreadCpuTime();
                var parser = serviceFhir.newJsonParser();
                int n = 0;
                for (Sent s : load) {
                    n += parser.parseResource(Observation.class, s.body()).hasId() ? 1 : 0;
                }
                parse = Math.max(parse, n / ((System.nanoTime() - t) / 1e9));
                parseCpu = Math.max(parseCpu, n / ((cpu.getCurrentThreadCpuTime() - c) / 1e9));

                t = System.nanoTime();
                c = cpu.getCurrentThreadCpuTime();
                Map<String, List<NormalizedResource>> byPatient = new LinkedHashMap<>();
                Instant now = Instant.now();
                var p2 = serviceFhir.newJsonParser();
                for (Sent s : load) {
                    Observation o = p2.parseResource(Observation.class, s.body());
                    NormalizedResource r = normalizer.normalize(o, now, SpecimenLookup.NONE);
                    byPatient
                            .computeIfAbsent(r.patientId(), k -> new ArrayList<>())
                            .add(r);
                }
                int evaluations = 0;
                for (var e : byPatient.entrySet()) {
                    evaluations += offline.run(
                                    new PatientFacts(e.getKey(), Sex.MALE, LocalDate.of(1958, 6, 1)),
                                    e.getValue(),
                                    null)
                            .evaluations()
                            .size();
                }
                eval = Math.max(eval, load.size() / ((System.nanoTime() - t) / 1e9));
                evalCpu = Math.max(evalCpu, load.size() / ((cpu.getCurrentThreadCpuTime() - c) / 1e9));
                if (evaluations == 0) {
                    throw new IllegalStateException("the evaluation path evaluated nothing");
                }
            }
            out.printf(
                    Locale.ROOT,
                    "floor (one thread, same %d Observations): HAPI JSON parse %.0f/s; parse + normalize + evaluate"
                            + " %.0f/s; ratio %.2f (target <= 2); per CPU second of the thread %.0f and %.0f, ratio %.2f;"
                            + " load %s%n",
                    load.size(),
                    parse,
                    eval,
                    parse / eval,
                    parseCpu,
                    evalCpu,
                    parseCpu / evalCpu,
                    loadAverage());
            lastParseRate = parse;
            lastEvaluationRate = eval;
        } finally {
            ctx.close();
        }
    }

    /**
     * {@code -Dbench.h2-statements=N}: on H2, print the N statements that took the most time in all (H2's own query
     * statistics), to find the one to look at next.
     */
    private static final int H2_STATEMENTS = Integer.getInteger("bench.h2-statements", 0);

    private void printCostliestStatements(JdbcClient jdbc) {
        out.printf("%s statements by total time on H2 (count, mean rows):%n", H2_STATEMENTS);
        jdbc.sql("SELECT SQL_STATEMENT, EXECUTION_COUNT, CUMULATIVE_EXECUTION_TIME, AVERAGE_ROW_COUNT"
                        + " FROM INFORMATION_SCHEMA.QUERY_STATISTICS ORDER BY CUMULATIVE_EXECUTION_TIME DESC"
                        + " FETCH FIRST :n ROWS ONLY")
                .param("n", H2_STATEMENTS)
                .query((rs, n) -> {
                    String sql = rs.getString(1).replaceAll("\\s+", " ");
                    out.printf(
                            Locale.ROOT,
                            "  %7.0f ms %7d x %6.1f rows  %s%n",
                            rs.getDouble(3),
                            rs.getLong(2),
                            rs.getDouble(4),
                            sql.length() > 160 ? sql.substring(0, 160) + "..." : sql);
                    return sql;
                })
                .list();
    }

    volatile double lastParseRate;
    volatile double lastEvaluationRate;

    // ---- helpers --------------------------------------------------------------------------------------------

    private void print(Result r) {
        double best = r.steps().stream().mapToDouble(Step::commitRate).max().orElse(0);
        out.printf(
                Locale.ROOT,
                "%-8s committed %d of %d offered; best sustained %.0f Observations/s to audit commit; heap after GC"
                        + " %.0f MiB with %d patients tracked (%.0f MiB before the service started), load %s%n",
                r.database(),
                r.committed(),
                r.offered(),
                best,
                r.heapUsedBytes() / 1048576.0,
                r.patientsTracked(),
                r.heapBaselineBytes() / 1048576.0,
                loadAverage());
    }

    private static long percentile(List<Long> values, int p) {
        if (values.isEmpty()) {
            return -1;
        }
        List<Long> sorted = new ArrayList<>(values);
        sorted.sort(null);
        int index = (int) Math.ceil(p / 100.0 * sorted.size()) - 1;
        return sorted.get(Math.max(0, Math.min(sorted.size() - 1, index)));
    }

    private static long count(JdbcClient jdbc, String sql) {
        return jdbc.sql(sql).query(Long.class).single();
    }

    private static long usedHeapAfterGc() throws InterruptedException {
        for (int i = 0; i < 3; i++) {
            System.gc();
            TimeUnit.MILLISECONDS.sleep(200);
        }
        return ManagementFactory.getMemoryMXBean().getHeapMemoryUsage().getUsed();
    }

    static String loadAverage() {
        try {
            String[] f = Files.readString(Path.of("/proc/loadavg")).split(" ");
            return f[0] + " " + f[1] + " " + f[2];
        } catch (IOException e) {
            return "n/a";
        }
    }

    private static int freePort() throws IOException {
        try (ServerSocket s = new ServerSocket(0)) {
            return s.getLocalPort();
        }
    }
}
