package org.lungflag.service.replay;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.parser.IParser;
import ca.uhn.fhir.parser.LenientErrorHandler;
import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.io.BufferedReader;
import java.io.BufferedWriter;
import java.io.FilterInputStream;
import java.io.IOException;
import java.io.InputStream;
import java.io.InputStreamReader;
import java.io.OutputStream;
import java.io.OutputStreamWriter;
import java.io.Writer;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayDeque;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.HashMap;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import java.util.TreeMap;
import java.util.concurrent.ExecutionException;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;
import java.util.zip.GZIPInputStream;
import org.hl7.fhir.instance.model.api.IBaseResource;
import org.hl7.fhir.r4.model.CodeableConcept;
import org.hl7.fhir.r4.model.Coding;
import org.hl7.fhir.r4.model.Flag;
import org.hl7.fhir.r4.model.Observation;
import org.hl7.fhir.r4.model.OperationOutcome;
import org.hl7.fhir.r4.model.Patient;
import org.hl7.fhir.r4.model.Reference;
import org.hl7.fhir.r4.model.Specimen;
import org.hl7.fhir.r4.model.StringType;
import org.lungflag.fhir.profiles.LungflagFhir;
import org.lungflag.rules.catalog.ParameterOverrides;
import org.lungflag.rules.catalog.RuleCatalog;
import org.lungflag.rules.catalog.RuleDefinition;
import org.lungflag.rules.engine.RuleEngine;
import org.lungflag.rules.engine.RuleEvaluation;
import org.lungflag.rules.engine.UsedIndex;
import org.lungflag.rules.index.IndexCode;
import org.lungflag.rules.index.SiteParameters;
import org.lungflag.rules.measure.ClinicalFact;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.patient.Sex;
import org.lungflag.rules.quality.DataQualityReason;
import org.lungflag.service.conformance.ConformancePackage;
import org.lungflag.service.normalize.NormalizedResource;
import org.lungflag.service.normalize.Normalizer;
import org.lungflag.service.normalize.ObservationMapper;
import org.lungflag.service.normalize.SpecimenLookup;
import org.lungflag.service.normalize.SpecimenLookup.SpecimenFacts;
import org.lungflag.service.offline.OfflineEvaluation;
import org.lungflag.service.offline.PatientRun;
import org.lungflag.service.offline.Pipelines;
import org.lungflag.service.patient.PatientFactsMapper;
import org.lungflag.service.replay.Spill.DeferredEntry;
import org.lungflag.service.replay.Spill.Entry;
import org.lungflag.service.replay.Spill.PatientEntry;
import org.lungflag.service.replay.Spill.ResourceEntry;
import org.lungflag.service.replay.Spill.SpecimenEntry;
import org.lungflag.service.writeback.DerivedIndexJson;

/**
 * The replay itself: NDJSON in, the design.md output files out, through the live service's normalizer and {@link
 * OfflineEvaluation} (design invariant 2: one code path).
 *
 * <p>Pass 1 reads every line once, parses it with HAPI, normalizes Observations with the service's {@link
 * Normalizer} and spills the normalized facts to bucket files by patient ({@link Spill}); refused lines go to
 * rejected.ndjson at once. Pass 2 reads one bucket at a time, orders each patient's resources by clinical time,
 * evaluates them with the catalog (and once more per sweep value) and writes the outputs, patients in the order of
 * {@link Spill#PATIENT_ORDER}. The clinical clock is moved on to the end of the export (the latest clinical time in
 * it) so episodes whose deadline passed before then resolve or expire as they would have live.
 */
final class Replay {

    /** Bucket count: about one per 16 MiB of input, at least 1, at most 512. */
    static final long BYTES_PER_BUCKET = 16L << 20;

    static final int CHARTED_PATIENTS = 24;

    record Input(Path path, String name) {}

    /**
     * How replay spreads its work over threads; no output depends on it (ReplayCommandTest runs both and compares
     * every file byte for byte).
     *
     * @param threads threads that parse and normalize lines in pass 1 and evaluate patients in pass 2; 1 does all of
     *     it on the calling thread, one line and one patient after the other
     * @param hapiIndices build each derived-index Observation with HAPI and encode it with HAPI's parser (the path
     *     {@link org.lungflag.service.writeback.DerivedIndexJson} is checked against) instead of writing its JSON
     *     directly
     */
    record Tuning(int threads, boolean hapiIndices) {

        Tuning {
            if (threads < 1) {
                throw new IllegalArgumentException("threads must be at least 1: " + threads);
            }
        }

        /** One thread per available processor, derived indices written directly. */
        static Tuning defaults() {
            return new Tuning(Math.max(1, Runtime.getRuntime().availableProcessors()), false);
        }

        /** Everything on one thread and through HAPI: the reference the faster paths are compared with. */
        static Tuning reference() {
            return new Tuning(1, true);
        }
    }

    /** Lines handed to a worker at once in pass 1. */
    static final int LINES_PER_BATCH = 256;

    /** A batch is handed over early once it holds this many characters, so huge lines do not pile up. */
    static final int CHARS_PER_BATCH = 1 << 20;

    private final List<Input> inputs;
    private final Path out;
    private final RuleCatalog catalog;
    private final ParameterOverrides overrides;
    private final String sweepKey;
    private final List<String> sweepValues;
    private final Progress progress;
    private final long bytesPerBucket;
    private final Tuning tuning;

    private final FhirContext fhir;
    private final IParser parser;
    private final ThreadLocal<IParser> parsers;
    private final DerivedIndexJson indexJson;
    private final IParser writer;
    private final Normalizer normalizer;
    private final OfflineEvaluation offline;
    private final List<OfflineEvaluation> variants = new ArrayList<>();
    private final Duration window;
    private final Instant receivedAt = Instant.now();

    // pass 1
    long lines;
    long blankLines;
    long bytesTotal;
    final Map<String, Long> byType = new TreeMap<>();
    long observations;
    long rejectedLines;
    long partlyRefusedLines;
    final Map<String, Long> rejectedByReason = new TreeMap<>();
    private final Map<String, SpecimenFacts> specimensWithoutSubject = new HashMap<>();
    private final java.util.Set<String> patientIds = new java.util.HashSet<>();
    private Instant exportStart;
    private Instant exportEnd;
    private final List<Rejection> laterRejections = new ArrayList<>();
    private Writer rejected;

    // pass 2
    long patientsEvaluated;
    long patientsWithoutPatientResource;
    long patientsWithoutData;
    double patientDays;
    long flagsWritten;
    long indicesWritten;
    long evaluationRows;
    final Map<String, RuleTally> tallies = new LinkedHashMap<>();
    final List<Map<String, RuleTally>> variantTallies = new ArrayList<>();
    final Map<String, IndexDistribution> distributions = new LinkedHashMap<>();
    final List<PatientChart> charts = new ArrayList<>();
    private long chartedWithoutEpisodes;

    Replay(
            List<Input> inputs,
            Path out,
            ReplaySettings settings,
            RuleCatalog catalog,
            ParameterOverrides overrides,
            String sweepKey,
            List<String> sweepValues,
            Progress progress,
            long bytesPerBucket,
            Tuning tuning) {
        this.bytesPerBucket = bytesPerBucket;
        this.tuning = tuning;
        this.inputs = inputs;
        this.out = out;
        this.catalog = catalog;
        this.overrides = overrides;
        this.sweepKey = sweepKey;
        this.sweepValues = sweepValues;
        this.progress = progress;
        this.fhir = Pipelines.fhirContext();
        // nothing replay writes holds a reference target to contain: skip HAPI's scan for them on every encode
        fhir.getParserOptions().setAutoContainReferenceTargetsWithNoId(false);
        FhirContext context = fhir;
        this.encoders = ThreadLocal.withInitial(context::newJsonParser);
        // lenient like the live service's parser, but quiet: a stray element is not worth a log line per row
        this.parser = fhir.newJsonParser().setParserErrorHandler(new LenientErrorHandler(false));
        this.parsers = ThreadLocal.withInitial(
                () -> context.newJsonParser().setParserErrorHandler(new LenientErrorHandler(false)));
        this.indexJson = new DerivedIndexJson(fhir);
        this.writer = fhir.newJsonParser();
        this.normalizer = Pipelines.normalizer(
                Pipelines.codeMap(fhir, ConformancePackage.load(fhir), settings.conceptMap()), settings.futureSkew());
        SiteParameters site = Pipelines.siteParameters(settings.evaluation());
        this.window = settings.evaluation().window();
        RuleEngine engine = Pipelines.engine(catalog, overrides, site, settings.evaluation());
        this.offline = new OfflineEvaluation(engine, catalog, window);
        for (RuleDefinition r : catalog.rules()) {
            tallies.put(r.id(), new RuleTally(r.id()));
        }
        if (sweepKey != null) {
            String ruleId = sweepKey.substring(0, sweepKey.indexOf('.'));
            for (String v : sweepValues) {
                ParameterOverrides with = overrides.with(catalog, sweepKey, v);
                variants.add(new OfflineEvaluation(
                        Pipelines.engine(catalog, with, site, settings.evaluation()), catalog, window));
                Map<String, RuleTally> t = new LinkedHashMap<>();
                t.put(ruleId, new RuleTally(ruleId));
                variantTallies.add(t);
            }
        }
    }

    ParameterOverrides overrides() {
        return overrides;
    }

    RuleCatalog catalog() {
        return catalog;
    }

    String sweepKey() {
        return sweepKey;
    }

    List<String> sweepValues() {
        return sweepValues;
    }

    Instant exportStart() {
        return exportStart;
    }

    Instant exportEnd() {
        return exportEnd;
    }

    List<Input> inputs() {
        return inputs;
    }

    Duration window() {
        return window;
    }

    /** Runs both passes and writes every output file. */
    void run() throws IOException {
        Files.createDirectories(out);
        // written last: a folder without them holds a run that did not finish, not an older run's figures
        Files.deleteIfExists(out.resolve("summary.json"));
        Files.deleteIfExists(out.resolve("report.html"));
        for (Input in : inputs) {
            bytesTotal += Files.size(in.path());
        }
        int buckets = (int) Math.max(1, Math.min(512, (bytesTotal + bytesPerBucket - 1) / bytesPerBucket));
        Path work = Files.createTempDirectory(out, ".replay-work-");
        try (Spill spill = new Spill(work, buckets);
                Writer rej = writer(out.resolve("rejected.ndjson"))) {
            this.rejected = rej;
            progress.startPhase();
            readAll(spill);
            spill.finish();
            progress.startPhase();
            evaluateAll(spill);
            laterRejections.sort(Comparator.comparingInt(Rejection::file).thenComparingLong(Rejection::line));
            for (Rejection r : laterRejections) {
                writeRejection(r);
            }
        }
        new SummaryWriter(this).write(out.resolve("summary.json"));
        new ReportWriter(this).write(out.resolve("report.html"));
    }

    // ------------------------------------------------------------------------------------------------ pass 1

    /** Lines of one file, with their line numbers, parsed and normalized together on a worker. */
    private record Batch(int file, long[] lineNos, String[] lines, int size) {}

    /**
     * Reads every line. With one thread each line is handled as it is read; otherwise this thread reads lines into
     * batches, workers parse and normalize them ({@link #process}, which touches no shared state), and this thread
     * applies their results ({@link #apply}) strictly in line order, so rejected.ndjson, the spill buckets and every
     * count come out as with one thread. At most {@code 4 x threads} batches are in flight, which bounds the memory.
     */
    private void readAll(Spill spill) throws IOException {
        int threads = tuning.threads();
        ExecutorService pool = threads > 1 ? Executors.newFixedThreadPool(threads, Replay::daemon) : null;
        ArrayDeque<Future<LineResult[]>> inFlight = new ArrayDeque<>();
        int maxInFlight = 4 * threads;
        long bytesBefore = 0;
        try {
            for (int f = 0; f < inputs.size(); f++) {
                Input in = inputs.get(f);
                long[] counted = {0};
                try (InputStream raw = Files.newInputStream(in.path());
                        InputStream counting = new FilterInputStream(raw) {
                            @Override
                            public int read() throws IOException {
                                int b = super.read();
                                if (b >= 0) {
                                    counted[0]++;
                                }
                                return b;
                            }

                            @Override
                            public int read(byte[] b, int off, int len) throws IOException {
                                int n = super.read(b, off, len);
                                if (n > 0) {
                                    counted[0] += n;
                                }
                                return n;
                            }
                        };
                        InputStream decoded =
                                in.name().endsWith(".gz") ? new GZIPInputStream(counting, 1 << 16) : counting;
                        BufferedReader reader =
                                new BufferedReader(new InputStreamReader(decoded, StandardCharsets.UTF_8), 1 << 16)) {
                    String line;
                    long lineNo = 0;
                    long[] nos = new long[LINES_PER_BATCH];
                    String[] batch = new String[LINES_PER_BATCH];
                    int size = 0;
                    long chars = 0;
                    while ((line = reader.readLine()) != null) {
                        lineNo++;
                        if (line.isBlank()) {
                            blankLines++;
                            continue;
                        }
                        lines++;
                        if (pool == null) {
                            apply(spill, process(f, lineNo, line));
                        } else {
                            nos[size] = lineNo;
                            batch[size++] = line;
                            chars += line.length();
                            if (size == LINES_PER_BATCH || chars >= CHARS_PER_BATCH) {
                                submit(pool, inFlight, maxInFlight, spill, new Batch(f, nos, batch, size));
                                nos = new long[LINES_PER_BATCH];
                                batch = new String[LINES_PER_BATCH];
                                size = 0;
                                chars = 0;
                            }
                        }
                        if ((lines & 1023) == 0) {
                            progress.reading(lines, bytesBefore + counted[0], bytesTotal, observations, false);
                        }
                    }
                    if (size > 0) {
                        submit(pool, inFlight, maxInFlight, spill, new Batch(f, nos, batch, size));
                    }
                }
                bytesBefore += Files.size(in.path());
            }
            while (!inFlight.isEmpty()) {
                applyAll(spill, inFlight.poll());
            }
        } finally {
            if (pool != null) {
                pool.shutdownNow();
            }
        }
        progress.reading(lines, bytesTotal, bytesTotal, observations, true);
    }

    private void submit(ExecutorService pool, ArrayDeque<Future<LineResult[]>> inFlight, int max, Spill spill, Batch b)
            throws IOException {
        while (inFlight.size() >= max) {
            applyAll(spill, inFlight.poll());
        }
        inFlight.add(pool.submit(() -> {
            LineResult[] results = new LineResult[b.size()];
            for (int i = 0; i < b.size(); i++) {
                results[i] = process(b.file(), b.lineNos()[i], b.lines()[i]);
            }
            return results;
        }));
    }

    private void applyAll(Spill spill, Future<LineResult[]> batch) throws IOException {
        for (LineResult r : await(batch)) {
            apply(spill, r);
        }
    }

    /** The value of a worker's task; what the task threw is thrown here, as it would have been on one thread. */
    private static <T> T await(Future<T> task) throws IOException {
        try {
            return task.get();
        } catch (InterruptedException e) {
            Thread.currentThread().interrupt();
            throw new IllegalStateException("replay was interrupted", e);
        } catch (ExecutionException e) {
            Throwable cause = e.getCause();
            if (cause instanceof IOException io) {
                throw io;
            }
            if (cause instanceof RuntimeException re) {
                throw re;
            }
            if (cause instanceof Error err) {
                throw err;
            }
            throw new IllegalStateException(cause);
        }
    }

    private static Thread daemon(Runnable r) {
        Thread t = new Thread(r, "replay-worker");
        t.setDaemon(true);
        return t;
    }

    /**
     * What one line gives, worked out by {@link #process} on any thread and applied to the replay's counts, files
     * and spill by {@link #apply} on the reading thread, in line order.
     */
    private static final class LineResult {
        /** The resource type, or null when the line did not parse. */
        String type;

        boolean observation;
        /** Refusals to count and write, in order; the first may refuse the whole line. */
        List<Rejection> rejections = List.of();
        /** A patient the export mentions. */
        String patientId;
        /** The earliest and latest clinical time the line holds. */
        Instant earliest;

        Instant latest;
        /** What goes to the patient's spill bucket. */
        Entry entry;
        /** A Specimen without a subject, looked up by reference from any patient in pass 2. */
        String specimenReference;

        SpecimenFacts specimen;

        void observe(Instant t) {
            if (t == null) {
                return;
            }
            if (latest == null || t.isAfter(latest)) {
                latest = t;
            }
            if (earliest == null || t.isBefore(earliest)) {
                earliest = t;
            }
        }

        LineResult refuse(Rejection r) {
            if (rejections.isEmpty()) {
                rejections = new ArrayList<>(1);
            }
            rejections.add(r);
            return this;
        }
    }

    /** Parses and normalizes one line; touches nothing but its result (safe on any thread). */
    private LineResult process(int file, long lineNo, String line) {
        LineResult out = new LineResult();
        IBaseResource resource;
        try {
            resource = parsers.get().parseResource(line);
        } catch (Exception e) {
            return out.refuse(
                    new Rejection(file, lineNo, null, unparseable(line), null, firstLine(e.getMessage()), true));
        }
        String type = resource.fhirType();
        out.type = type;
        if (resource instanceof Observation o) {
            out.observation = true;
            String subject = subjectPatient(o.getSubject());
            if (subject != null && referencesSeparateSpecimen(o)) {
                out.patientId = subject;
                out.observe(effectiveTime(o));
                out.entry = new DeferredEntry(subject, file, lineNo, line);
                return out;
            }
            NormalizedResource r;
            try {
                r = normalizer.normalize(o, receivedAt, SpecimenLookup.NONE);
            } catch (SpecimenLookup.SpecimenUnavailable e) {
                throw new IllegalStateException("SpecimenLookup.NONE is never unavailable", e);
            }
            accept(out, file, lineNo, r);
        } else if (resource instanceof Patient p) {
            if (!p.getIdElement().hasIdPart()) {
                return out.refuse(new Rejection(
                        file,
                        lineNo,
                        null,
                        DataQualityReason.MALFORMED_RESOURCE,
                        null,
                        "a Patient without an id cannot be matched to Observations",
                        true));
            }
            PatientFacts facts = PatientFactsMapper.from(p);
            out.patientId = facts.patientId();
            out.entry = new PatientEntry(facts);
        } else if (resource instanceof Specimen s) {
            if (!s.getIdElement().hasIdPart()) {
                return out.refuse(new Rejection(
                        file,
                        lineNo,
                        null,
                        DataQualityReason.MALFORMED_RESOURCE,
                        null,
                        "a Specimen without an id cannot be referenced by Observations",
                        true));
            }
            SpecimenFacts facts = ObservationMapper.facts(s);
            String ref = "Specimen/" + s.getIdElement().getIdPart();
            String subject = subjectPatient(s.getSubject());
            out.observe(facts.collectedAt());
            if (subject == null) {
                out.specimenReference = ref;
                out.specimen = facts;
            } else {
                out.entry = new SpecimenEntry(subject, ref, facts.kind(), facts.collectedAt());
            }
        } else if (!type.equals("Procedure") && !type.equals("Encounter")) {
            out.refuse(new Rejection(
                    file,
                    lineNo,
                    type + "/" + resource.getIdElement().getIdPart(),
                    DataQualityReason.UNSUPPORTED_RESOURCE_TYPE,
                    null,
                    "a " + type + " line; replay reads Patient, Observation, Specimen, Procedure and Encounter",
                    true));
        }
        // Procedure and Encounter are accepted (counted in the summary); no rule of this catalog reads them yet.
        return out;
    }

    /** A normalized Observation: its refusals (with the line) and, when it has facts, what to spill. */
    private static void accept(LineResult out, int file, long lineNo, NormalizedResource r) {
        boolean whole = r.wholeResourceRefused();
        for (NormalizedResource.Refusal refusal : r.refusals()) {
            out.refuse(new Rejection(
                    file,
                    lineNo,
                    r.source() == null ? null : r.source().toString(),
                    refusal.reason(),
                    refusal.part(),
                    refusal.detail(),
                    whole));
            whole = false; // count a line once
        }
        if (r.patientId() == null || (r.facts().isEmpty() && !r.retracted())) {
            return;
        }
        out.patientId = r.patientId();
        for (ClinicalFact f : r.facts()) {
            out.observe(f.time());
        }
        out.entry = new ResourceEntry(r.patientId(), r.source(), r.retracted(), r.facts());
    }

    /** Applies one line's result: counts, refusals written, the spill record. Reading thread only, line order. */
    private void apply(Spill spill, LineResult r) throws IOException {
        if (r.type != null) {
            byType.merge(r.type, 1L, Long::sum);
        }
        if (r.observation) {
            observations++;
        }
        for (Rejection rej : r.rejections) {
            refuse(rej);
        }
        if (r.patientId != null) {
            patientIds.add(r.patientId);
        }
        observe(r.earliest);
        observe(r.latest);
        if (r.specimenReference != null) {
            specimensWithoutSubject.put(r.specimenReference, r.specimen);
        }
        if (r.entry != null) {
            spill.write(r.entry);
        }
    }

    private void observe(Instant t) {
        if (t == null) {
            return;
        }
        if (exportEnd == null || t.isAfter(exportEnd)) {
            exportEnd = t;
        }
        if (exportStart == null || t.isBefore(exportStart)) {
            exportStart = t;
        }
    }

    /** One refused line (or part of one), for rejected.ndjson. */
    record Rejection(
            int file,
            long line,
            String resource,
            DataQualityReason reason,
            String part,
            String detail,
            boolean wholeLine) {}

    private void refuse(Rejection r) throws IOException {
        rejectedByReason.merge(r.reason().code(), 1L, Long::sum);
        writeRejection(r);
    }

    private final java.util.Set<Long> partlyCounted = new java.util.HashSet<>();

    private void writeRejection(Rejection r) throws IOException {
        if (r.wholeLine()) {
            rejectedLines++;
        } else if (r.part() != null && partlyCounted.add(((long) r.file() << 40) ^ r.line())) {
            partlyRefusedLines++;
        }
        OperationOutcome oo = new OperationOutcome();
        String where = inputs.get(r.file()).name() + ":" + r.line();
        var issue = oo.addIssue()
                .setSeverity(
                        r.wholeLine() ? OperationOutcome.IssueSeverity.ERROR : OperationOutcome.IssueSeverity.WARNING)
                .setCode(
                        switch (r.reason()) {
                            case MALFORMED_RESOURCE -> OperationOutcome.IssueType.STRUCTURE;
                            case UNSUPPORTED_RESOURCE_TYPE -> OperationOutcome.IssueType.NOTSUPPORTED;
                            default -> OperationOutcome.IssueType.INVALID;
                        })
                .setDetails(new CodeableConcept(new Coding(
                        LungflagFhir.CodeSystems.DATA_QUALITY,
                        r.reason().code(),
                        r.reason().display())))
                .setDiagnostics(
                        "line " + r.line() + " of " + inputs.get(r.file()).name()
                                + (r.resource() == null ? "" : " (" + r.resource() + ")") + ": " + r.detail());
        issue.addLocation(where);
        if (r.part() != null) {
            issue.addExpression(new StringType("Observation." + r.part()).getValue());
        }
        rejected.write(writer.encodeResourceToString(oo));
        rejected.write('\n');
    }

    private static final ObjectMapper JSON = new ObjectMapper();

    /** A line HAPI could not parse: a resource type it does not know, or not a FHIR resource at all. */
    private static DataQualityReason unparseable(String line) {
        try {
            JsonNode node = JSON.readTree(line);
            if (node != null && node.isObject() && node.path("resourceType").isTextual()) {
                String type = node.get("resourceType").asText();
                if (!type.isEmpty()
                        && !FhirContext.forR4Cached().getResourceTypes().contains(type)) {
                    return DataQualityReason.UNSUPPORTED_RESOURCE_TYPE;
                }
            }
        } catch (IOException notJson) {
            // not JSON at all
        }
        return DataQualityReason.MALFORMED_RESOURCE;
    }

    private static String firstLine(String message) {
        if (message == null) {
            return "not a parseable FHIR R4 JSON resource";
        }
        String m = message.strip();
        int nl = m.indexOf('\n');
        m = nl < 0 ? m : m.substring(0, nl);
        // HAPI messages may quote content; keep them short so no record text travels far
        return "not a parseable FHIR R4 JSON resource: " + (m.length() > 160 ? m.substring(0, 160) + "..." : m);
    }

    private static String subjectPatient(Reference subject) {
        if (subject == null || !subject.hasReference()) {
            return null;
        }
        var ref = subject.getReferenceElement();
        return "Patient".equals(ref.getResourceType()) && ref.hasIdPart() ? ref.getIdPart() : null;
    }

    private static boolean referencesSeparateSpecimen(Observation o) {
        return o.hasSpecimen()
                && o.getSpecimen().getResource() == null
                && o.getSpecimen().hasReference()
                && !o.getSpecimen().getReference().startsWith("#");
    }

    private static Instant effectiveTime(Observation o) {
        try {
            if (o.hasEffectiveDateTimeType()) {
                return o.getEffectiveDateTimeType().getValue().toInstant();
            }
            if (o.hasEffectiveInstantType()) {
                return o.getEffectiveInstantType().getValue().toInstant();
            }
            if (o.hasEffectivePeriod() && o.getEffectivePeriod().hasStart()) {
                return o.getEffectivePeriod().getStart().toInstant();
            }
        } catch (RuntimeException e) {
            return null;
        }
        return null;
    }

    // ------------------------------------------------------------------------------------------------ pass 2

    private static final class PatientData {
        PatientFacts facts;
        final List<ResourceEntry> resources = new ArrayList<>();
        final List<DeferredEntry> deferred = new ArrayList<>();
        final Map<String, SpecimenFacts> specimens = new HashMap<>();
    }

    private void evaluateAll(Spill spill) throws IOException {
        long total = patientIds.size();
        long done = 0;
        ExecutorService pool =
                tuning.threads() > 1 ? Executors.newFixedThreadPool(tuning.threads(), Replay::daemon) : null;
        try (Writer indices = writer(out.resolve("indices.ndjson"));
                Writer advisories = writer(out.resolve("advisories.ndjson"));
                Writer csv = writer(out.resolve("evaluations.csv"))) {
            csv.write("patient,rule,rule_version,time,outcome,tier,reason,episode,indices,detail\n");
            for (int b = 0; b < spill.buckets(); b++) {
                Map<String, PatientData> byPatient = new HashMap<>();
                for (Entry e : spill.read(b)) {
                    PatientData d = byPatient.computeIfAbsent(e.patientId(), k -> new PatientData());
                    if (e instanceof PatientEntry p) {
                        d.facts = p.facts();
                    } else if (e instanceof ResourceEntry r) {
                        d.resources.add(r);
                    } else if (e instanceof DeferredEntry df) {
                        d.deferred.add(df);
                    } else if (e instanceof SpecimenEntry s) {
                        d.specimens.put(s.reference(), new SpecimenFacts(s.kind(), s.collectedAt()));
                    }
                }
                List<String> ids = new ArrayList<>(byPatient.keySet());
                ids.sort(Spill.PATIENT_ORDER);
                for (String id : ids) {
                    normalizeDeferred(byPatient.get(id));
                }
                // patients are independent: the workers evaluate a few patients ahead while this thread
                // writes and counts the results in patient order
                ArrayDeque<Future<PatientResult>> inFlight = new ArrayDeque<>();
                for (String id : ids) {
                    PatientData data = byPatient.remove(id);
                    if (pool == null) {
                        consume(compute(id, data), indices, advisories, csv);
                        progress.evaluating(++done, total, false);
                        continue;
                    }
                    if (inFlight.size() >= patientsInFlight()) {
                        consume(await(inFlight.poll()), indices, advisories, csv);
                        progress.evaluating(++done, total, false);
                    }
                    inFlight.add(pool.submit(() -> compute(id, data)));
                }
                while (!inFlight.isEmpty()) {
                    consume(await(inFlight.poll()), indices, advisories, csv);
                    progress.evaluating(++done, total, false);
                }
            }
        } finally {
            if (pool != null) {
                pool.shutdownNow();
            }
        }
        progress.evaluating(done, total, true);
    }

    /**
     * Patients evaluated ahead of the one being written: enough to keep every worker busy while this thread writes,
     * few enough that the results held stay small (in the benchmark a patient's two days are ~180 kB of
     * derived-index JSON).
     */
    private int patientsInFlight() {
        return Math.max(8, 4 * tuning.threads());
    }

    private final ThreadLocal<IParser> encoders;

    /** Observations that reference a separate Specimen, normalized now that every Specimen is known. */
    private void normalizeDeferred(PatientData d) {
        for (DeferredEntry df : d.deferred) {
            Observation o = (Observation) parser.parseResource(df.json());
            SpecimenLookup lookup =
                    ref -> Optional.ofNullable(d.specimens.getOrDefault(ref, specimensWithoutSubject.get(ref)));
            NormalizedResource r;
            try {
                r = normalizer.normalize(o, receivedAt, lookup);
            } catch (SpecimenLookup.SpecimenUnavailable e) {
                throw new IllegalStateException("an in-memory Specimen lookup is never unavailable", e);
            }
            boolean whole = r.wholeResourceRefused();
            for (NormalizedResource.Refusal refusal : r.refusals()) {
                rejectedByReason.merge(refusal.reason().code(), 1L, Long::sum);
                laterRejections.add(new Rejection(
                        df.file(),
                        df.line(),
                        r.source() == null ? null : r.source().toString(),
                        refusal.reason(),
                        refusal.part(),
                        refusal.detail(),
                        whole));
                whole = false;
            }
            if (r.patientId() != null && (!r.facts().isEmpty() || r.retracted())) {
                d.resources.add(new ResourceEntry(r.patientId(), r.source(), r.retracted(), r.facts()));
            }
        }
        d.deferred.clear();
    }

    /** What one patient's evaluation produced, computed in parallel with other patients'. */
    private record PatientResult(
            String id,
            boolean withoutPatientResource,
            List<NormalizedResource> resources,
            Instant first,
            Instant last,
            Instant end,
            PatientRun run,
            List<PatientRun> variantRuns,
            List<String> indices,
            List<String> flags,
            String csvRows,
            List<IndexPoint> indexPoints) {}

    /** One derived-index value for the distributions, first seen at its anchor time, with its sampling key. */
    private record IndexPoint(String code, String unit, long key, double value) {}

    private PatientResult compute(String id, PatientData d) {
        List<NormalizedResource> resources = latestVersions(id, d.resources);
        PatientFacts facts = d.facts == null ? new PatientFacts(id, Sex.UNKNOWN, null) : d.facts;
        Instant first = null;
        Instant last = null;
        for (NormalizedResource r : resources) {
            for (ClinicalFact f : r.facts()) {
                if (f.kind() == QuantityKind.BODY_HEIGHT || f.kind() == QuantityKind.BODY_WEIGHT) {
                    continue;
                }
                first = first == null || f.time().isBefore(first) ? f.time() : first;
                last = last == null || f.time().isAfter(last) ? f.time() : last;
            }
        }
        if (last == null) {
            return new PatientResult(
                    id,
                    d.facts == null,
                    resources,
                    null,
                    null,
                    null,
                    null,
                    List.of(),
                    List.of(),
                    List.of(),
                    "",
                    List.of());
        }
        Instant end = exportEnd != null && exportEnd.isAfter(last) ? exportEnd : last;
        PatientRun run = offline.run(facts, resources, end);
        IParser encoder = encoders.get();
        List<String> indices;
        if (tuning.hapiIndices()) {
            indices = new ArrayList<>();
            for (Observation o : offline.indices(run, end)) {
                indices.add(encoder.encodeResourceToString(o));
            }
        } else {
            indices = offline.indicesJson(run, end, indexJson);
        }
        List<String> flags = new ArrayList<>();
        for (Flag f : offline.flags(run, "replay")) {
            flags.add(encoder.encodeResourceToString(f));
        }
        List<PatientRun> variantRuns = new ArrayList<>();
        for (OfflineEvaluation v : variants) {
            variantRuns.add(v.run(facts, resources, end));
        }
        // the evaluations.csv rows and the distribution points are worked out here, on the worker, so the thread
        // that writes the results in patient order only appends them
        StringBuilder rows = new StringBuilder(run.evaluations().size() * 160);
        List<IndexPoint> points = new ArrayList<>();
        Map<IndexAt, Boolean> seenIndex = new HashMap<>();
        Instant rowTime = null;
        String rowTimeText = null;
        for (RuleEvaluation e : run.evaluations()) {
            if (!e.at().equals(rowTime)) {
                rowTime = e.at();
                rowTimeText = rowTime.toString();
            }
            csvRow(rows, e, rowTimeText);
            for (UsedIndex u : e.explanation().indices()) {
                if (seenIndex.put(new IndexAt(u.code(), e.at()), Boolean.TRUE) == null) {
                    String code = u.code().code();
                    points.add(new IndexPoint(
                            code, u.unit(), IndexDistribution.key(id, e.at().getEpochSecond(), code), u.value()));
                }
            }
        }
        return new PatientResult(
                id,
                d.facts == null,
                resources,
                first,
                last,
                end,
                run,
                variantRuns,
                indices,
                flags,
                rows.toString(),
                points);
    }

    private void consume(PatientResult r, Writer indicesOut, Writer advisoriesOut, Writer csv) throws IOException {
        if (r.withoutPatientResource()) {
            patientsWithoutPatientResource++;
        }
        if (r.run() == null) {
            patientsWithoutData++;
            return;
        }
        patientsEvaluated++;
        patientDays += Duration.between(r.first(), r.last()).toSeconds() / 86_400.0;
        for (String o : r.indices()) {
            indicesOut.write(o);
            indicesOut.write('\n');
            indicesWritten++;
        }
        for (String f : r.flags()) {
            advisoriesOut.write(f);
            advisoriesOut.write('\n');
            flagsWritten++;
        }
        PatientRun run = r.run();
        csv.write(r.csvRows());
        evaluationRows += run.evaluations().size();
        for (IndexPoint p : r.indexPoints()) {
            distributions
                    .computeIfAbsent(p.code(), k -> new IndexDistribution(k, p.unit()))
                    .add(p.key(), p.value());
        }
        for (RuleTally t : tallies.values()) {
            t.add(run.evaluations(), run.episodes(), r.end());
        }
        for (int i = 0; i < r.variantRuns().size(); i++) {
            PatientRun v = r.variantRuns().get(i);
            for (RuleTally t : variantTallies.get(i).values()) {
                t.add(v.evaluations(), v.episodes(), r.end());
            }
        }
        chart(r.id(), run, r.resources(), r.first(), r.end());
    }

    /** One version per resource (the latest; an entered-in-error latest withdraws it), in clinical order. */
    private static List<NormalizedResource> latestVersions(String patientId, List<ResourceEntry> entries) {
        Map<String, ResourceEntry> latest = new HashMap<>();
        for (ResourceEntry e : entries) {
            String key = e.source().unversioned();
            ResourceEntry prior = latest.get(key);
            if (prior == null || newer(e, prior)) {
                latest.put(key, e);
            }
        }
        List<NormalizedResource> out = new ArrayList<>();
        for (ResourceEntry e : latest.values()) {
            if (!e.retracted()) {
                out.add(new NormalizedResource(e.source(), patientId, e.facts(), List.of(), false));
            }
        }
        out.sort(
                Comparator.comparing(NormalizedResource::clinicalTime, Comparator.nullsFirst(Comparator.naturalOrder()))
                        .thenComparing(r -> r.source().toString()));
        return out;
    }

    private static boolean newer(ResourceEntry a, ResourceEntry b) {
        int c = compareVersions(a.source().version(), b.source().version());
        if (c != 0) {
            return c > 0;
        }
        // the same version twice (a duplicated line): keep one, chosen by content so line order does not matter
        if (a.retracted() != b.retracted()) {
            return a.retracted();
        }
        return a.facts().toString().compareTo(b.facts().toString()) > 0;
    }

    private static int compareVersions(String a, String b) {
        if (a == null || b == null) {
            return a == null ? (b == null ? 0 : -1) : 1;
        }
        try {
            return Long.compare(Long.parseLong(a), Long.parseLong(b));
        } catch (NumberFormatException e) {
            return a.compareTo(b);
        }
    }

    private void chart(String id, PatientRun run, List<NormalizedResource> resources, Instant from, Instant to) {
        boolean hasEpisodes = !run.episodes().isEmpty();
        if (charts.size() >= CHARTED_PATIENTS || (!hasEpisodes && chartedWithoutEpisodes >= 4)) {
            return;
        }
        if (!hasEpisodes) {
            chartedWithoutEpisodes++;
        }
        Map<String, List<PatientChart.Point>> series = new LinkedHashMap<>();
        PatientChart.SERIES.keySet().forEach(k -> series.put(k, new ArrayList<>()));
        Map<String, Boolean> seen = new HashMap<>();
        for (RuleEvaluation e : run.evaluations()) {
            for (UsedIndex u : e.explanation().indices()) {
                String name = u.code() == IndexCode.PF_RATIO
                        ? "P/F ratio"
                        : u.code() == IndexCode.SF_RATIO
                                ? "S/F ratio"
                                : u.code() == IndexCode.VENTILATORY_RATIO ? "Ventilatory ratio" : null;
                if (name != null && seen.put(name + e.at(), Boolean.TRUE) == null) {
                    series.get(name).add(new PatientChart.Point(e.at(), u.value()));
                }
            }
        }
        for (NormalizedResource r : resources) {
            for (ClinicalFact f : r.facts()) {
                if (f instanceof Measurement m && m.kind() == QuantityKind.PEEP) {
                    series.get("PEEP").add(new PatientChart.Point(m.time(), m.value()));
                } else if (f instanceof Measurement m && m.kind() == QuantityKind.FIO2) {
                    series.get("FiO2").add(new PatientChart.Point(m.time(), m.value()));
                }
            }
        }
        for (Map.Entry<String, List<PatientChart.Point>> e : series.entrySet()) {
            List<PatientChart.Point> pts = new ArrayList<>(e.getValue());
            pts.sort(Comparator.comparing(PatientChart.Point::at));
            e.setValue(PatientChart.thin(pts, 400));
        }
        charts.add(new PatientChart(id, series, run.episodes(), from, to));
    }

    /** One index and anchor time (the distributions count each once per patient). */
    private record IndexAt(IndexCode code, Instant at) {}

    /** One evaluations.csv row, appended to {@code row}; {@code time} is {@code e.at().toString()}. */
    private static StringBuilder csvRow(StringBuilder row, RuleEvaluation e, String time) {
        StringBuilder idx = new StringBuilder();
        for (UsedIndex u : e.explanation().indices()) {
            if (!idx.isEmpty()) {
                idx.append(';');
            }
            idx.append(u.code().code()).append('=').append(round(u.value()));
        }
        row.append(csv(e.patientId())).append(',');
        row.append(csv(e.ruleId())).append(',');
        row.append(csv(e.ruleVersion())).append(',');
        row.append(time).append(',');
        row.append(e.outcome().name()).append(',');
        row.append(csv(e.tier())).append(',');
        row.append(e.reason() == null ? "" : e.reason().code()).append(',');
        row.append(e.episode() == null ? "" : e.episode().key()).append(',');
        row.append(csv(idx.toString())).append(',');
        return row.append(csv(e.detail())).append('\n');
    }

    private static final java.math.MathContext SIX_DIGITS = new java.math.MathContext(6);

    static String round(double v) {
        return new java.math.BigDecimal(v)
                .round(SIX_DIGITS)
                .stripTrailingZeros()
                .toPlainString();
    }

    private static String csv(String s) {
        if (s == null) {
            return "";
        }
        if (s.indexOf(',') < 0 && s.indexOf('"') < 0 && s.indexOf('\n') < 0 && s.indexOf('\r') < 0) {
            return s;
        }
        return '"' + s.replace("\"", "\"\"") + '"';
    }

    private static Writer writer(Path file) throws IOException {
        OutputStream os = Files.newOutputStream(file);
        return new BufferedWriter(new OutputStreamWriter(os, StandardCharsets.UTF_8), 1 << 16);
    }
}
