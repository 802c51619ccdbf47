package org.lungflag.service.replay;

import static org.assertj.core.api.Assertions.assertThat;

import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.concurrent.TimeUnit;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * A replay given too small a heap says so in one line and exits 1, instead of dying with a stack trace and leaving a
 * folder that looks finished. Runs the command in its own JVM with a 64 MiB heap on an invented export of 400
 * ventilated patients (about 45 MiB) spilled to one bucket, so pass 2 holds the whole export: about 11 MiB of input
 * per bucket needs about 40 MiB of heap on this build, so this needs well over 64 MiB, while the JVM itself starts in
 * less than 32 MiB with the test class path.
 */
class ReplayOutOfMemoryTest {

    @TempDir
    Path tmp;

    @Test
    void tooSmallAHeapGivesOneLineAndExitOneAndNoSummary() throws IOException, InterruptedException {
        Path in = tmp.resolve("export.ndjson");
        ReplayBenchmark.write(in, 400, 7);
        Path out = Files.createDirectories(tmp.resolve("out"));
        // a finished earlier run in the same folder must not pass for this one
        Files.writeString(out.resolve("summary.json"), "{}");
        Path stderr = tmp.resolve("stderr.txt");
        String java = Path.of(System.getProperty("java.home"), "bin", "java").toString();
        Process p = new ProcessBuilder(List.of(
                        java,
                        "-Xmx64m",
                        "-cp",
                        System.getProperty("java.class.path"),
                        OneBucket.class.getName(),
                        "--input",
                        in.toString(),
                        "--out",
                        out.toString()))
                .redirectOutput(ProcessBuilder.Redirect.DISCARD)
                .redirectError(stderr.toFile())
                .start();
        assertThat(p.waitFor(3, TimeUnit.MINUTES)).as("replay finished").isTrue();
        String err = Files.readString(stderr, StandardCharsets.UTF_8);
        assertThat(p.exitValue()).as(err).isEqualTo(ReplayCommand.FAILED);
        List<String> lines = err.lines()
                .filter(l -> !l.startsWith("replay: reading") && !l.startsWith("replay: evaluating"))
                .toList();
        assertThat(lines).as(err).hasSize(1);
        // the JVM may report a little less than -Xmx as its maximum heap
        assertThat(lines.get(0))
                .startsWith("replay: ran out of memory (maximum heap ")
                .contains("are incomplete (there is no summary.json)", "-Xmx512m");
        assertThat(err).doesNotContain("Exception", "\tat ");
        assertThat(out.resolve("summary.json")).doesNotExist();
        assertThat(out.resolve("report.html")).doesNotExist();
    }

    /** The replay command with every patient in one spill bucket (the forked JVM's main). */
    public static final class OneBucket {
        public static void main(String[] args) {
            ReplayCommand.quietLogging();
            System.exit(ReplayCommand.run(
                    List.of(args),
                    System.err,
                    false,
                    java.time.Duration.ofSeconds(10),
                    1L << 40,
                    Replay.Tuning.defaults()));
        }
    }
}
