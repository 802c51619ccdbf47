package org.lungflag.service.replay;

import static org.assertj.core.api.Assertions.assertThat;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.ObjectNode;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.PrintStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Collections;
import java.util.List;
import java.util.Random;
import java.util.Set;
import java.util.stream.Collectors;
import org.hl7.fhir.r4.model.CodeSystem;
import org.hl7.fhir.r4.model.Flag;
import org.hl7.fhir.r4.model.OperationOutcome;
import org.hl7.fhir.r4.model.Resource;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.lungflag.fhir.profiles.LungflagFhir;
import org.lungflag.service.conformance.ConformancePackage;

/**
 * The replay command end to end, in process: exit codes, refused lines, and that the outputs do not depend on line
 * order, on how the export is split into files, or on how many spill buckets are used.
 *
 * <p>Clinical expectations come from the Berlin definition (ARDS Definition Task Force, JAMA 2012, via
 * clinical-reference §2.2 [PUB-2]): P/F = PaO2/FiO2 with PEEP ≥ 5 cmH2O; 200 < P/F ≤ 300 mild, 100 < P/F ≤ 200
 * moderate, P/F ≤ 100 severe. The data are invented.
 */
class ReplayCommandTest {

    static final Instant END = Instant.parse("2026-02-10T12:00:00Z");
    static List<String> ward;

    @TempDir
    Path tmp;

    @BeforeAll
    static void data() {
        List<ReplayFixtures.Course> courses = new ArrayList<>(ReplayFixtures.ward(42, 30, "w"));
        // worked example: PaO2 80 at FiO2 0.50 -> P/F 160, Berlin moderate; PaO2 45 -> P/F 90, severe
        courses.add(new ReplayFixtures.Course(
                "worked", org.hl7.fhir.r4.model.Enumerations.AdministrativeGender.MALE, "1961-04-02", 0.5, new int[] {
                    160, 90, 90, 350, 350, 350, 350, 350, 350, 350
                }));
        ward = ReplayFixtures.ndjson(ReplayFixtures.resources(courses, END));
    }

    record Run(int exit, Path out, String stderr) {}

    Run replay(long bytesPerBucket, String... args) {
        ByteArrayOutputStream err = new ByteArrayOutputStream();
        int exit = ReplayCommand.run(
                List.of(args),
                new PrintStream(err, true, StandardCharsets.UTF_8),
                false,
                Duration.ofMillis(1),
                bytesPerBucket);
        Path out = null;
        for (int i = 0; i < args.length - 1; i++) {
            if (args[i].equals("--out")) {
                out = Path.of(args[i + 1]);
            }
        }
        return new Run(exit, out, err.toString(StandardCharsets.UTF_8));
    }

    Run replay(String... args) {
        return replay(Replay.BYTES_PER_BUCKET, args);
    }

    static String read(Path p) throws IOException {
        return Files.readString(p, StandardCharsets.UTF_8);
    }

    @Test
    void aCleanExportExitsZeroAndTheWorkedExampleIsModerateThenSevere() throws IOException {
        Path in = ReplayFixtures.write(tmp.resolve("in/Observation.ndjson"), ward);
        Run run = replay(
                "--input",
                in.getParent().toString(),
                "--out",
                tmp.resolve("out").toString());
        assertThat(run.exit()).as(run.stderr()).isEqualTo(0);
        for (String f : List.of(
                "indices.ndjson",
                "advisories.ndjson",
                "evaluations.csv",
                "rejected.ndjson",
                "summary.json",
                "report.html")) {
            assertThat(run.out().resolve(f)).exists();
        }
        assertThat(read(run.out().resolve("rejected.ndjson"))).isEmpty();
        List<Flag> worked = flags(run.out()).stream()
                .filter(f -> f.getSubject().getReference().equals("Patient/worked"))
                .toList();
        assertThat(worked).hasSize(1);
        Flag flag = worked.get(0);
        // onset at the first gas (P/F 160, moderate), escalated to severe at the second (P/F 90); then P/F 350 from
        // the fourth gas (+12 h): no band met, resolved 6 h (the rule's resolve_after) after the last band met (+8 h)
        assertThat(flag.getCode().getCodingFirstRep().getCode()).isEqualTo("hypoxemia-severe");
        assertThat(flag.getStatus()).isEqualTo(Flag.FlagStatus.INACTIVE);
        Instant start = END.minus(Duration.ofHours(36));
        assertThat(flag.getPeriod().getStart().toInstant()).isEqualTo(start);
        assertThat(flag.getPeriod().getEnd().toInstant()).isEqualTo(start.plus(Duration.ofHours(14)));
        assertThat(flag.getExtensionByUrl(LungflagFhir.Extensions.ADVISORY_MODE)
                        .getValue()
                        .primitiveValue())
                .isEqualTo("replay");
        assertThat(read(run.out().resolve("evaluations.csv")))
                .contains("worked,hypoxemia,1.0.0," + start + ",ONSET,hypoxemia-moderate,")
                .contains("pf-ratio=160")
                .contains("pf-ratio=90");
        assertThat(read(run.out().resolve("indices.ndjson"))).contains("\"code\":\"50984-4\"");
        JsonNode summary =
                new ObjectMapper().readTree(run.out().resolve("summary.json").toFile());
        assertThat(summary.at("/patients/evaluated").asLong()).isEqualTo(31);
        assertThat(summary.at("/input/observations").asLong()).isEqualTo(31 * 32);
        assertThat(summary.at("/rules/hypoxemia/firings").asLong()).isPositive();
        assertThat(run.stderr()).contains("replay: reading").contains("replay: evaluating");
        assertThat(run.stderr()).doesNotContain("\r");
    }

    @Test
    void refusedLinesAreListedWithLineNumberAndReasonAndTheExitIsThree() throws IOException {
        List<String> lines = new ArrayList<>(ward.subList(0, 40));
        lines.add("{\"resourceType\": \"Observation\", \"id\": ");
        lines.add("{\"resourceType\":\"Medication\",\"id\":\"m1\"}");
        lines.add("{\"resourceType\":\"NotAResource\",\"id\":\"x\"}");
        lines.add(
                "{\"resourceType\":\"Observation\",\"id\":\"no-subject\",\"status\":\"final\",\"code\":{\"coding\":[{\"system\":\"http://loinc.org\",\"code\":\"2703-7\"}]},\"effectiveDateTime\":\"2026-02-10T01:00:00Z\",\"valueQuantity\":{\"value\":80,\"system\":\"http://unitsofmeasure.org\",\"code\":\"mm[Hg]\"}}");
        lines.add(
                "{\"resourceType\":\"Observation\",\"id\":\"no-time\",\"status\":\"final\",\"code\":{\"coding\":[{\"system\":\"http://loinc.org\",\"code\":\"2703-7\"}]},\"subject\":{\"reference\":\"Patient/w0\"},\"valueQuantity\":{\"value\":80,\"system\":\"http://unitsofmeasure.org\",\"code\":\"mm[Hg]\"}}");
        lines.addAll(ward.subList(40, ward.size()));
        Path in = ReplayFixtures.write(tmp.resolve("in.ndjson"), lines);
        Run run = replay("--input", in.toString(), "--out", tmp.resolve("out").toString());
        assertThat(run.exit()).as(run.stderr()).isEqualTo(3);
        List<OperationOutcome> rejected = read(run.out().resolve("rejected.ndjson"))
                .lines()
                .map(l -> (OperationOutcome) ReplayFixtures.FHIR.newJsonParser().parseResource(l))
                .toList();
        assertThat(rejected)
                .extracting(o -> o.getIssueFirstRep().getLocation().get(0).getValue()
                        + " "
                        + o.getIssueFirstRep().getDetails().getCodingFirstRep().getCode())
                .containsExactly(
                        "in.ndjson:41 malformed-resource",
                        "in.ndjson:42 unsupported-resource-type",
                        "in.ndjson:43 unsupported-resource-type",
                        "in.ndjson:44 missing-subject",
                        "in.ndjson:45 missing-time");
        // every reason is a code of the conformance package's data-quality CodeSystem
        CodeSystem dq = (CodeSystem) ConformancePackage.load(ReplayFixtures.FHIR)
                .byUrl(LungflagFhir.CodeSystems.DATA_QUALITY)
                .orElseThrow();
        Set<String> codes = dq.getConcept().stream()
                .map(CodeSystem.ConceptDefinitionComponent::getCode)
                .collect(Collectors.toSet());
        assertThat(rejected).allSatisfy(o -> {
            assertThat(codes)
                    .contains(o.getIssueFirstRep()
                            .getDetails()
                            .getCodingFirstRep()
                            .getCode());
            assertThat(o.getIssueFirstRep().getDetails().getCodingFirstRep().getSystem())
                    .isEqualTo(LungflagFhir.CodeSystems.DATA_QUALITY);
            assertThat(o.getIssueFirstRep().getSeverity()).isEqualTo(OperationOutcome.IssueSeverity.ERROR);
        });
        // the rest was still evaluated
        assertThat(flags(run.out())).isNotEmpty();
        JsonNode summary =
                new ObjectMapper().readTree(run.out().resolve("summary.json").toFile());
        assertThat(summary.at("/input/rejectedLines").asLong()).isEqualTo(5);
        assertThat(read(run.out().resolve("report.html"))).contains("missing-subject");
    }

    @Test
    void badArgumentsAndUnreadableInputExitTwoWithOneLine() throws IOException {
        Path in = ReplayFixtures.write(tmp.resolve("in.ndjson"), ward.subList(0, 10));
        String out = tmp.resolve("out").toString();
        Path params = tmp.resolve("p.yaml");
        Files.writeString(params, "hypoxemia:\n  pf_mild_max: lots\n");
        Path emptyDir = Files.createDirectories(tmp.resolve("empty"));
        List<String[]> bad = List.of(
                new String[] {"--out", out},
                new String[] {"--input", in.toString()},
                new String[] {"--input", tmp.resolve("missing.ndjson").toString(), "--out", out},
                new String[] {"--input", emptyDir.toString(), "--out", out},
                new String[] {"--input", in.toString(), "--out", in.toString()},
                new String[] {"--input", in.toString(), "--out", out, "--frobnicate"},
                new String[] {
                    "--input",
                    in.toString(),
                    "--out",
                    out,
                    "--catalog",
                    tmp.resolve("nope").toString()
                },
                new String[] {"--input", in.toString(), "--out", out, "--params", params.toString()},
                new String[] {
                    "--input",
                    in.toString(),
                    "--out",
                    out,
                    "--params",
                    tmp.resolve("no.yaml").toString()
                },
                new String[] {"--input", in.toString(), "--out", out, "--sweep", "hypoxemia.pf_mild_max"},
                new String[] {"--input", in.toString(), "--out", out, "--sweep", "hypoxemia.no_such=1,2"},
                new String[] {"--input", in.toString(), "--out", out, "--sweep", "nosuchrule.x=1"},
                new String[] {"--input", in.toString(), "--out", out, "--sweep", "hypoxemia.resolve_after=6h,soon"});
        for (String[] args : bad) {
            Run run = replay(args);
            assertThat(run.exit())
                    .as(String.join(" ", args) + " -> " + run.stderr())
                    .isEqualTo(2);
            assertThat(run.stderr().strip().lines()).as(run.stderr()).hasSize(1);
            assertThat(run.stderr()).startsWith("replay: ");
        }
    }

    @Test
    void shuffledLinesSplitFilesAndMoreSpillBucketsGiveIdenticalOutputs() throws IOException {
        List<String> lines = new ArrayList<>(ward);
        lines.add("{\"resourceType\":\"Medication\",\"id\":\"m1\"}");
        Path ordered = ReplayFixtures.write(tmp.resolve("a/export.ndjson"), lines);
        Run base = replay(
                "--input", ordered.toString(), "--out", tmp.resolve("out-a").toString());
        assertThat(base.exit()).isEqualTo(3);

        List<String> shuffled = new ArrayList<>(lines);
        Collections.shuffle(shuffled, new Random(7));
        Path shuffledFile = ReplayFixtures.write(tmp.resolve("b/export.ndjson"), shuffled);
        // small buckets: the shuffled export is spread over many spill files
        Run shuffledRun = replay(
                4096,
                "--input",
                shuffledFile.toString(),
                "--out",
                tmp.resolve("out-b").toString());
        assertThat(shuffledRun.exit()).isEqualTo(3);

        Path split = Files.createDirectories(tmp.resolve("c"));
        for (int i = 0; i < shuffled.size(); i += 37) {
            ReplayFixtures.write(
                    split.resolve(String.format("part-%03d.ndjson", i / 37)),
                    shuffled.subList(i, Math.min(shuffled.size(), i + 37)));
        }
        Run splitRun = replay(
                "--input", split.toString(), "--out", tmp.resolve("out-c").toString());
        assertThat(splitRun.exit()).isEqualTo(3);

        for (Run other : List.of(shuffledRun, splitRun)) {
            for (String f : List.of("indices.ndjson", "advisories.ndjson", "evaluations.csv", "report.html")) {
                assertThat(withoutFileCount(read(other.out().resolve(f))))
                        .as(f)
                        .isEqualTo(withoutFileCount(read(base.out().resolve(f))));
            }
            assertThat(summaryWithoutFiles(other.out())).isEqualTo(summaryWithoutFiles(base.out()));
            // the refused line is the same; only where it was differs
            assertThat(rejectedWithoutPlace(other.out())).isEqualTo(rejectedWithoutPlace(base.out()));
        }
        assertThat(flags(base.out())).hasSizeGreaterThan(5);
    }

    /**
     * Parsing on several threads and writing derived indices with {@code DerivedIndexJson} is only a speed-up: every
     * output file, rejected.ndjson with its file:line places included, is byte for byte what one thread writes with
     * HAPI building and encoding each derived-index Observation (the path before the speed-up). The export spans
     * many reading batches and holds what pass 1 handles differently: refused lines among good ones, a blank line,
     * a Specimen with and one without a subject, Observations that wait for them, a corrected version and an
     * entered-in-error withdrawal.
     */
    @Test
    void severalThreadsAndDirectIndexJsonGiveTheSameBytesAsOneThroughHapi() throws IOException {
        List<String> lines =
                new ArrayList<>(ReplayFixtures.ndjson(ReplayFixtures.resources(ReplayFixtures.ward(9, 120, "t"), END)));
        assertThat(lines.size()).isGreaterThan(4 * Replay.LINES_PER_BATCH);
        List<String> odd = List.of(
                "{\"resourceType\": \"Observation\", \"id\": ",
                "",
                "{\"resourceType\":\"Medication\",\"id\":\"m1\"}",
                "{\"resourceType\":\"NotAResource\",\"id\":\"x\"}",
                "{\"resourceType\":\"Patient\",\"gender\":\"male\"}",
                "{\"resourceType\":\"Observation\",\"id\":\"no-time\",\"status\":\"final\",\"code\":{\"coding\":[{\"system\":\"http://loinc.org\",\"code\":\"2703-7\"}]},\"subject\":{\"reference\":\"Patient/t3\"},\"valueQuantity\":{\"value\":80,\"system\":\"http://unitsofmeasure.org\",\"code\":\"mm[Hg]\"}}",
                "{\"resourceType\":\"Specimen\",\"id\":\"sp1\",\"subject\":{\"reference\":\"Patient/t5\"},\"type\":{\"coding\":[{\"system\":\"http://snomed.info/sct\",\"code\":\"122552005\"}]},\"collection\":{\"collectedDateTime\":\"2026-02-10T09:20:00Z\"}}",
                "{\"resourceType\":\"Specimen\",\"id\":\"sp2\",\"type\":{\"coding\":[{\"system\":\"http://snomed.info/sct\",\"code\":\"122555007\"}]},\"collection\":{\"collectedDateTime\":\"2026-02-10T10:20:00Z\"}}",
                "{\"resourceType\":\"Observation\",\"id\":\"gas-sp1\",\"meta\":{\"versionId\":\"1\"},\"status\":\"final\",\"code\":{\"coding\":[{\"system\":\"http://loinc.org\",\"code\":\"2703-7\"}]},\"subject\":{\"reference\":\"Patient/t5\"},\"specimen\":{\"reference\":\"Specimen/sp1\"},\"effectiveDateTime\":\"2026-02-10T09:20:00Z\",\"valueQuantity\":{\"value\":41,\"system\":\"http://unitsofmeasure.org\",\"code\":\"mm[Hg]\"}}",
                "{\"resourceType\":\"Observation\",\"id\":\"gas-sp2\",\"meta\":{\"versionId\":\"1\"},\"status\":\"final\",\"code\":{\"coding\":[{\"system\":\"http://loinc.org\",\"code\":\"2703-7\"}]},\"subject\":{\"reference\":\"Patient/t6\"},\"specimen\":{\"reference\":\"Specimen/sp2\"},\"effectiveDateTime\":\"2026-02-10T10:20:00Z\",\"valueQuantity\":{\"value\":44,\"system\":\"http://unitsofmeasure.org\",\"code\":\"mm[Hg]\"}}",
                "{\"resourceType\":\"Observation\",\"id\":\"gas-nosp\",\"meta\":{\"versionId\":\"1\"},\"status\":\"final\",\"code\":{\"coding\":[{\"system\":\"http://loinc.org\",\"code\":\"2703-7\"}]},\"subject\":{\"reference\":\"Patient/t7\"},\"specimen\":{\"reference\":\"Specimen/missing\"},\"effectiveDateTime\":\"2026-02-10T10:20:00Z\",\"valueQuantity\":{\"value\":44,\"system\":\"http://unitsofmeasure.org\",\"code\":\"mm[Hg]\"}}",
                "{\"resourceType\":\"Procedure\",\"id\":\"pr1\",\"status\":\"completed\",\"subject\":{\"reference\":\"Patient/t1\"}}");
        // a corrected second version of one PaO2 and a withdrawn one, from the fixture's own lines
        String pao2 = lines.stream()
                .filter(l -> l.contains("\"obs-t8-4\""))
                .findFirst()
                .orElseThrow();
        odd = new ArrayList<>(odd);
        odd.add(pao2.replace("\"versionId\":\"1\"", "\"versionId\":\"2\"")
                .replaceFirst("\"value\":[0-9.]+", "\"value\":39"));
        String withdrawn = lines.stream()
                .filter(l -> l.contains("\"obs-t9-7\""))
                .findFirst()
                .orElseThrow();
        odd.add(withdrawn
                .replace("\"versionId\":\"1\"", "\"versionId\":\"2\"")
                .replace("\"status\":\"final\"", "\"status\":\"entered-in-error\""));
        for (int i = 0; i < odd.size(); i++) {
            lines.add(Math.min(lines.size(), 150 + i * 331), odd.get(i));
        }
        Path in = Files.createDirectories(tmp.resolve("in"));
        ReplayFixtures.write(in.resolve("a.ndjson"), lines.subList(0, 2000));
        ReplayFixtures.write(in.resolve("b.ndjson"), lines.subList(2000, lines.size()));

        List<String> files = List.of(
                "indices.ndjson",
                "advisories.ndjson",
                "evaluations.csv",
                "rejected.ndjson",
                "summary.json",
                "report.html");
        Path reference = tmp.resolve("out-reference");
        int exit = ReplayCommand.run(
                List.of("--input", in.toString(), "--out", reference.toString()),
                new PrintStream(new ByteArrayOutputStream(), true, StandardCharsets.UTF_8),
                false,
                Duration.ofMillis(1),
                64 << 10,
                Replay.Tuning.reference());
        assertThat(exit).isEqualTo(3);
        // the unparseable line, Medication, NotAResource, the Patient without an id, the PaO2 without a time
        assertThat(read(reference.resolve("rejected.ndjson")).lines()).hasSize(5);
        assertThat(read(reference.resolve("indices.ndjson")).lines()).hasSizeGreaterThan(100);
        for (Replay.Tuning tuning :
                List.of(new Replay.Tuning(1, false), new Replay.Tuning(2, false), new Replay.Tuning(5, false))) {
            Path out = tmp.resolve("out-" + tuning.threads() + "-" + tuning.hapiIndices());
            assertThat(ReplayCommand.run(
                            List.of("--input", in.toString(), "--out", out.toString()),
                            new PrintStream(new ByteArrayOutputStream(), true, StandardCharsets.UTF_8),
                            false,
                            Duration.ofMillis(1),
                            64 << 10,
                            tuning))
                    .isEqualTo(exit);
            for (String f : files) {
                assertThat(Files.readAllBytes(out.resolve(f)))
                        .as(f + " with " + tuning)
                        .isEqualTo(Files.readAllBytes(reference.resolve(f)));
            }
        }
    }

    /** The report says how many input files were read; everything else must be equal. */
    static String withoutFileCount(String text) {
        return text.replaceAll("<tr><td>Input files</td><td>\\d+</td></tr>", "");
    }

    static String summaryWithoutFiles(Path out) throws IOException {
        ObjectNode tree = (ObjectNode)
                new ObjectMapper().readTree(out.resolve("summary.json").toFile());
        ((ObjectNode) tree.get("input")).remove("files");
        return tree.toString();
    }

    static List<String> rejectedWithoutPlace(Path out) throws IOException {
        return read(out.resolve("rejected.ndjson"))
                .lines()
                .map(l -> {
                    OperationOutcome o = (OperationOutcome)
                            ReplayFixtures.FHIR.newJsonParser().parseResource(l);
                    return o.getIssueFirstRep().getDetails().getCodingFirstRep().getCode();
                })
                .sorted()
                .toList();
    }

    static List<Flag> flags(Path out) throws IOException {
        List<Flag> flags = new ArrayList<>();
        for (String l : read(out.resolve("advisories.ndjson")).lines().toList()) {
            Resource r = (Resource) ReplayFixtures.FHIR.newJsonParser().parseResource(l);
            flags.add((Flag) r);
        }
        return flags;
    }
}
