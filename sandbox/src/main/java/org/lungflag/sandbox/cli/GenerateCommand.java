package org.lungflag.sandbox.cli;

import java.io.PrintStream;
import java.nio.file.Files;
import java.nio.file.InvalidPathException;
import java.nio.file.Path;
import java.util.List;
import java.util.Set;
import org.lungflag.sandbox.scenario.ScenarioGenerator;

/** {@code generate}: writes the invented demo scenario (NDJSON per resource type and the expected advisories). */
final class GenerateCommand implements Command {

    private static final String OUT = "out";
    private static final String SEED = "seed";

    @Override
    public String name() {
        return "generate";
    }

    @Override
    public String summary() {
        return "write the invented demo scenario as FHIR R4 NDJSON (seeded: the same seed gives the same files)";
    }

    @Override
    public String usage() {
        return String.join(
                System.lineSeparator(),
                "generate --out DIR [--seed N]",
                "  --out DIR   folder to write Patient/Encounter/Specimen/Observation.ndjson and"
                        + " expected-advisories.csv into",
                "              (the committed copy: sandbox/src/main/resources/scenario)",
                "  --seed N    seed of the noise (default " + ScenarioGenerator.DEFAULT_SEED
                        + ", the committed scenario)");
    }

    @Override
    public int run(List<String> arguments, PrintStream out, PrintStream err) {
        CommandOptions options = CommandOptions.parse(name(), arguments, Set.of(OUT, SEED));
        String text = options.text(OUT).orElseThrow(() -> new UsageException("generate: option '--out' is required"));
        Path directory;
        try {
            directory = Path.of(text);
        } catch (InvalidPathException e) {
            throw new UsageException("generate: option '--out' is not a valid path: '" + text + "'");
        }
        if (Files.exists(directory) && !Files.isDirectory(directory)) {
            throw new UsageException("generate: option '--out' names a file, not a directory: '" + text + "'");
        }
        long seed = options.longNumber(SEED, ScenarioGenerator.DEFAULT_SEED);
        try {
            new ScenarioGenerator().write(seed, directory);
        } catch (RuntimeException e) {
            err.println("generate: " + e.getMessage());
            return SandboxCli.EXIT_FAILURE;
        }
        out.println("Wrote the demo scenario (seed " + seed + ") to "
                + directory.toAbsolutePath().normalize());
        return SandboxCli.EXIT_OK;
    }
}
