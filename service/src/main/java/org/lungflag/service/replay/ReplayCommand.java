package org.lungflag.service.replay;

import ch.qos.logback.classic.Level;
import ch.qos.logback.classic.LoggerContext;
import ch.qos.logback.classic.encoder.PatternLayoutEncoder;
import ch.qos.logback.classic.spi.ILoggingEvent;
import ch.qos.logback.core.ConsoleAppender;
import java.io.IOException;
import java.io.InputStream;
import java.io.PrintStream;
import java.io.UncheckedIOException;
import java.nio.file.AccessDeniedException;
import java.nio.file.Files;
import java.nio.file.NoSuchFileException;
import java.nio.file.Path;
import java.time.Duration;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.stream.Stream;
import org.lungflag.rules.catalog.CatalogException;
import org.lungflag.rules.catalog.ParameterOverrideException;
import org.lungflag.rules.catalog.ParameterOverrides;
import org.lungflag.rules.catalog.RuleCatalog;
import org.lungflag.service.offline.Pipelines;
import org.lungflag.service.replay.ReplayOptions.BadArgument;
import org.slf4j.LoggerFactory;
import org.snakeyaml.engine.v2.api.Load;
import org.snakeyaml.engine.v2.api.LoadSettings;
import org.snakeyaml.engine.v2.exceptions.YamlEngineException;

/**
 * {@code java -jar lungflag-service.jar replay --input PATH --out DIR [--catalog DIR] [--params FILE] [--sweep
 * RULE.PARAM=V1,V2,...]}: the quality team's backtest. No web server, no port, no database. Exit codes (design.md):
 * 0 every line was used, 3 finished but some lines (or parts of lines) were refused (listed in rejected.ndjson), 2
 * bad arguments or unreadable input (one line on stderr).
 */
public final class ReplayCommand {

    public static final int OK = 0;
    public static final int BAD_ARGUMENTS = 2;
    public static final int SOME_REJECTED = 3;
    /** The replay could not finish (it ran out of memory); the outputs are incomplete and summary.json is absent. */
    public static final int FAILED = 1;

    private ReplayCommand() {}

    /** Entry point from {@code LungflagApplication.main}. */
    public static void main(String[] args) {
        quietLogging();
        int code = run(List.of(args), System.err, System.console() != null);
        System.exit(code);
    }

    /**
     * Runs a replay and returns its exit code.
     *
     * @param args the arguments after {@code replay}
     * @param terminal whether stderr is a terminal (progress rewrites one line) or not (a periodic plain line)
     */
    public static int run(List<String> args, PrintStream err, boolean terminal) {
        return run(args, err, terminal, Duration.ofSeconds(10), Replay.BYTES_PER_BUCKET);
    }

    /** As {@link #run(List, PrintStream, boolean)}, with the progress interval and bucket size tests choose. */
    static int run(
            List<String> args, PrintStream err, boolean terminal, Duration plainProgressEvery, long bytesPerBucket) {
        return run(args, err, terminal, plainProgressEvery, bytesPerBucket, Replay.Tuning.defaults());
    }

    /** As above, with the threads and index encoding tests and the benchmark choose (no output depends on them). */
    static int run(
            List<String> args,
            PrintStream err,
            boolean terminal,
            Duration plainProgressEvery,
            long bytesPerBucket,
            Replay.Tuning tuning) {
        try {
            return runOnce(args, err, terminal, plainProgressEvery, bytesPerBucket, tuning);
        } catch (OutOfMemoryError e) {
            // what was held is unreachable now, so this line can be printed; the heap needed depends on the spill
            // bucket size, not on the export's size (README "Replay")
            err.println(outOfMemory(Runtime.getRuntime().maxMemory()));
            return FAILED;
        }
    }

    private static int runOnce(
            List<String> args,
            PrintStream err,
            boolean terminal,
            Duration plainProgressEvery,
            long bytesPerBucket,
            Replay.Tuning tuning) {
        Replay replay;
        Path outDir;
        try {
            ReplayOptions options = ReplayOptions.parse(args);
            outDir = options.out();
            List<Replay.Input> inputs = inputs(options.input());
            prepareOut(options.out());
            ReplaySettings settings = ReplaySettings.load();
            Path catalogDir = options.catalog() != null
                    ? options.catalog()
                    : settings.evaluation().catalog();
            if (catalogDir != null && !Files.isDirectory(catalogDir)) {
                throw new BadArgument("--catalog " + catalogDir + " is not a folder of rules");
            }
            RuleCatalog catalog;
            try {
                catalog = Pipelines.catalog(catalogDir);
            } catch (CatalogException e) {
                throw new BadArgument("the rule catalog " + catalogDir + " does not load: " + oneLine(e.getMessage()));
            }
            Map<String, Object> values =
                    new LinkedHashMap<>(settings.evaluation().params());
            if (options.params() != null) {
                values.putAll(readParams(options.params()));
            }
            ParameterOverrides overrides;
            try {
                overrides = ParameterOverrides.from(catalog, values);
            } catch (ParameterOverrideException e) {
                throw new BadArgument(
                        (options.params() != null ? "--params " + options.params() + ": " : "parameter override: ")
                                + oneLine(e.getMessage()));
            }
            if (options.sweepKey() != null) {
                for (String v : options.sweepValues()) {
                    try {
                        overrides.with(catalog, options.sweepKey(), v);
                    } catch (ParameterOverrideException e) {
                        throw new BadArgument("--sweep: " + oneLine(e.getMessage()));
                    }
                }
            }
            replay = new Replay(
                    inputs,
                    options.out(),
                    settings,
                    catalog,
                    overrides,
                    options.sweepKey(),
                    options.sweepValues(),
                    new Progress(err, terminal, plainProgressEvery),
                    bytesPerBucket,
                    tuning);
        } catch (BadArgument e) {
            err.println("replay: " + e.getMessage());
            return BAD_ARGUMENTS;
        }
        try {
            replay.run();
        } catch (IOException | UncheckedIOException e) {
            err.println("replay: cannot read or write: " + oneLine(String.valueOf(e.getMessage())));
            return BAD_ARGUMENTS;
        }
        err.printf(
                "replay: %,d lines, %,d Observations, %,d patients, %,d advisories; %,d lines refused, %,d partly"
                        + " refused; outputs in %s%n",
                replay.lines,
                replay.observations,
                replay.patientsEvaluated,
                replay.flagsWritten,
                replay.rejectedLines,
                replay.partlyRefusedLines,
                outDir);
        return replay.rejectedLines > 0 || replay.partlyRefusedLines > 0 ? SOME_REJECTED : OK;
    }

    /** The one line printed when a replay runs out of memory. */
    static String outOfMemory(long maxHeapBytes) {
        return "replay: ran out of memory (maximum heap " + (maxHeapBytes >> 20) + " MiB), so the outputs in the --out"
                + " folder are incomplete (there is no summary.json); run it again with a larger heap, e.g. java"
                + " -Xmx512m -jar lungflag-service.jar replay ...";
    }

    /** The NDJSON files: PATH itself, or the {@code .ndjson} (and {@code .ndjson.gz}) files in it, by name. */
    static List<Replay.Input> inputs(Path path) {
        if (!Files.exists(path)) {
            throw new BadArgument("--input " + path + " does not exist");
        }
        if (Files.isRegularFile(path)) {
            if (!Files.isReadable(path)) {
                throw new BadArgument("--input " + path + " is not readable");
            }
            return List.of(new Replay.Input(path, path.getFileName().toString()));
        }
        if (!Files.isDirectory(path) || !Files.isReadable(path)) {
            throw new BadArgument("--input " + path + " is neither a readable file nor a readable folder");
        }
        List<Replay.Input> out = new ArrayList<>();
        try (Stream<Path> files = Files.list(path)) {
            for (Path f : files.sorted().toList()) {
                String name = f.getFileName().toString();
                if (Files.isRegularFile(f) && (name.endsWith(".ndjson") || name.endsWith(".ndjson.gz"))) {
                    if (!Files.isReadable(f)) {
                        throw new BadArgument("--input " + f + " is not readable");
                    }
                    out.add(new Replay.Input(f, name));
                }
            }
        } catch (IOException e) {
            throw new BadArgument("--input " + path + " cannot be listed: " + e.getMessage());
        }
        if (out.isEmpty()) {
            throw new BadArgument("--input " + path + " holds no .ndjson files");
        }
        return out;
    }

    private static void prepareOut(Path out) {
        if (Files.exists(out) && !Files.isDirectory(out)) {
            throw new BadArgument("--out " + out + " exists and is not a folder");
        }
        try {
            Files.createDirectories(out);
        } catch (IOException e) {
            throw new BadArgument(
                    "--out " + out + " cannot be created: " + e.getClass().getSimpleName());
        }
        if (!Files.isWritable(out)) {
            throw new BadArgument("--out " + out + " is not writable");
        }
    }

    /**
     * A parameter file: YAML, either nested ({@code hypoxemia: {pf_mild_max: 250}}) or flat ({@code
     * hypoxemia.pf_mild_max: 250}); values are checked against the catalog by {@link ParameterOverrides}.
     */
    static Map<String, Object> readParams(Path file) {
        Object doc;
        try (InputStream in = Files.newInputStream(file)) {
            doc = new Load(LoadSettings.builder().setLabel(file.toString()).build()).loadFromInputStream(in);
        } catch (NoSuchFileException e) {
            throw new BadArgument("--params " + file + " does not exist");
        } catch (AccessDeniedException e) {
            throw new BadArgument("--params " + file + " is not readable");
        } catch (IOException e) {
            throw new BadArgument(
                    "--params " + file + " cannot be read: " + e.getClass().getSimpleName());
        } catch (YamlEngineException e) {
            throw new BadArgument("--params " + file + " is not valid YAML: " + oneLine(e.getMessage()));
        }
        Map<String, Object> out = new LinkedHashMap<>();
        if (doc == null) {
            return out;
        }
        if (!(doc instanceof Map<?, ?> map)) {
            throw new BadArgument("--params " + file + " must be a YAML map of rule-id.parameter: value");
        }
        for (Map.Entry<?, ?> e : map.entrySet()) {
            String key = String.valueOf(e.getKey());
            if (e.getValue() instanceof Map<?, ?> inner) {
                for (Map.Entry<?, ?> p : inner.entrySet()) {
                    out.put(key + "." + p.getKey(), scalar(file, key + "." + p.getKey(), p.getValue()));
                }
            } else {
                out.put(key, scalar(file, key, e.getValue()));
            }
        }
        return out;
    }

    private static String scalar(Path file, String key, Object value) {
        if (value == null || value instanceof Map || value instanceof List) {
            throw new BadArgument("--params " + file + ": " + key + " needs a single value");
        }
        return String.valueOf(value);
    }

    static String oneLine(String message) {
        if (message == null) {
            return "no detail";
        }
        return message.strip().replaceAll("\\s*\\R\\s*", "; ");
    }

    /** Without Spring Boot's logging set-up logback would log everything at DEBUG to stdout: warnings to stderr. */
    static void quietLogging() {
        if (!(LoggerFactory.getILoggerFactory() instanceof LoggerContext context)) {
            return;
        }
        context.reset();
        PatternLayoutEncoder encoder = new PatternLayoutEncoder();
        encoder.setContext(context);
        encoder.setPattern("replay: %level %logger{0}: %msg%n");
        encoder.start();
        ConsoleAppender<ILoggingEvent> appender = new ConsoleAppender<>();
        appender.setContext(context);
        appender.setTarget("System.err");
        appender.setEncoder(encoder);
        appender.start();
        ch.qos.logback.classic.Logger root = context.getLogger(org.slf4j.Logger.ROOT_LOGGER_NAME);
        root.setLevel(Level.WARN);
        root.addAppender(appender);
    }
}
