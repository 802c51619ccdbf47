package org.lungflag.rules.catalog;

import java.io.IOException;
import java.io.InputStream;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import java.util.stream.Stream;

/**
 * The rule catalog: rules as data, one folder per rule ({@code <rule-id>/rule.yaml}, {@code tests.yaml}, {@code
 * README.md}). Loading parses, then checks, then compiles every rule; a bad file fails the whole load with {@code
 * file:line:col} and a sentence saying what to fix ({@link CatalogException}). Immutable and thread-safe once
 * loaded.
 */
public final class RuleCatalog {

    /** Classpath folder of the default catalog (packaged from {@code rules/catalog}). */
    public static final String CLASSPATH_ROOT = "catalog/";

    private final List<RuleDefinition> rules;
    private final Map<String, RuleDefinition> byId;
    private final String origin;

    private RuleCatalog(List<RuleDefinition> rules, String origin) {
        this.rules = List.copyOf(rules);
        Map<String, RuleDefinition> m = new HashMap<>();
        rules.forEach(r -> m.put(r.id(), r));
        this.byId = Map.copyOf(m);
        this.origin = origin;
    }

    /** Loads the default catalog from the classpath; its {@code catalog.lock} is the index of rule ids. */
    public static RuleCatalog loadDefault() {
        ClassLoader loader = RuleCatalog.class.getClassLoader();
        String lockText = resource(loader, CLASSPATH_ROOT + CatalogLock.FILE_NAME)
                .orElseThrow(
                        () -> new IllegalStateException("the default catalog is not on the classpath (" + CLASSPATH_ROOT
                                + CatalogLock.FILE_NAME + " missing); is lungflag-rules built with its resources?"));
        CatalogLock lock = CatalogLock.parse(lockText);
        List<Source> sources = new ArrayList<>();
        for (CatalogLock.Entry e : lock.entries()) {
            String file = e.id() + "/rule.yaml";
            String text = resource(loader, CLASSPATH_ROOT + file)
                    .orElseThrow(() -> new CatalogException(List.of(new CatalogProblem(
                            CatalogLock.FILE_NAME,
                            0,
                            0,
                            "the lock lists '" + e.id() + "' but " + file + " is missing"))));
            sources.add(new Source(file, e.id(), text));
        }
        return build(sources, "classpath:" + CLASSPATH_ROOT);
    }

    /** Loads a catalog from a directory holding one folder per rule. */
    public static RuleCatalog load(Path dir) {
        if (!Files.isDirectory(dir)) {
            throw new CatalogException(
                    List.of(new CatalogProblem(dir.toString(), 0, 0, "the catalog directory does not exist")));
        }
        List<Source> sources = new ArrayList<>();
        List<CatalogProblem> problems = new ArrayList<>();
        try (Stream<Path> children = Files.list(dir)) {
            for (Path folder : children.sorted().toList()) {
                if (!Files.isDirectory(folder)) {
                    continue;
                }
                String name = folder.getFileName().toString();
                Path ruleFile = folder.resolve("rule.yaml");
                if (!Files.isRegularFile(ruleFile)) {
                    problems.add(new CatalogProblem(
                            name + "/", 0, 0, "a rule folder must contain rule.yaml (and tests.yaml, README.md)"));
                    continue;
                }
                sources.add(new Source(name + "/rule.yaml", name, Files.readString(ruleFile, StandardCharsets.UTF_8)));
            }
        } catch (IOException e) {
            throw new UncheckedIOException("cannot read the catalog directory " + dir, e);
        }
        if (!problems.isEmpty()) {
            throw new CatalogException(problems);
        }
        return build(sources, dir.toString());
    }

    private record Source(String file, String folder, String text) {}

    private static RuleCatalog build(List<Source> sources, String origin) {
        Problems problems = new Problems();
        List<RuleDefinition> rules = new ArrayList<>();
        Map<String, String> idFiles = new HashMap<>();
        Map<String, String> codeOwners = new HashMap<>();
        for (Source s : sources) {
            RuleDefinition r = RuleReader.read(s.file(), s.text(), null, problems);
            if (r == null) {
                continue;
            }
            String previous = idFiles.putIfAbsent(r.id(), s.file());
            if (previous != null) {
                problems.add(
                        s.file(),
                        1,
                        1,
                        "duplicate rule id '" + r.id() + "': also defined in " + previous
                                + "; every rule needs its own id (and folder catalog/<id>/)");
                continue;
            }
            if (!r.id().equals(s.folder())) {
                problems.add(
                        s.file(),
                        1,
                        1,
                        "the id '" + r.id() + "' differs from its folder name '" + s.folder()
                                + "'; a rule lives in catalog/<id>/rule.yaml");
                continue;
            }
            for (Tier t : r.tiers()) {
                String owner = codeOwners.putIfAbsent(t.code(), r.id());
                if (owner != null) {
                    problems.add(
                            s.file(), 1, 1, "the advisory code '" + t.code() + "' is already used by rule " + owner);
                }
            }
            rules.add(r);
        }
        if (rules.isEmpty() && problems.isEmpty()) {
            problems.add(origin, 0, 0, "the catalog holds no rules");
        }
        problems.throwIfAny();
        rules.sort(java.util.Comparator.comparing(RuleDefinition::id));
        return new RuleCatalog(rules, origin);
    }

    private static Optional<String> resource(ClassLoader loader, String name) {
        try (InputStream in = loader.getResourceAsStream(name)) {
            if (in == null) {
                return Optional.empty();
            }
            return Optional.of(new String(in.readAllBytes(), StandardCharsets.UTF_8));
        } catch (IOException e) {
            throw new UncheckedIOException("cannot read " + name + " from the classpath", e);
        }
    }

    /** Every rule, sorted by id. */
    public List<RuleDefinition> rules() {
        return rules;
    }

    public Optional<RuleDefinition> rule(String id) {
        return Optional.ofNullable(byId.get(id));
    }

    /** Where the catalog was loaded from (for logs and the audit). */
    public String origin() {
        return origin;
    }

    /** The lock this catalog would have: id, version and digest of every rule. */
    public CatalogLock lock() {
        return CatalogLock.of(rules.stream()
                .map(r -> new CatalogLock.Entry(r.id(), r.version(), r.digest()))
                .toList());
    }
}
