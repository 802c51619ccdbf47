package org.lungflag.rules.catalog;

import java.nio.charset.StandardCharsets;
import java.security.MessageDigest;
import java.security.NoSuchAlgorithmException;
import java.util.ArrayList;
import java.util.HexFormat;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import org.snakeyaml.engine.v2.api.Dump;
import org.snakeyaml.engine.v2.api.DumpSettings;
import org.snakeyaml.engine.v2.api.Load;
import org.snakeyaml.engine.v2.api.LoadSettings;
import org.snakeyaml.engine.v2.common.FlowStyle;

/**
 * The committed lock file {@code catalog/catalog.lock}: one line per rule, {@code <id> <version> sha256:<hex>},
 * sorted by id. A rule whose definition changed without a version bump fails the build (CatalogLockTest); the lock
 * also serves as the catalog's index on the classpath.
 *
 * <p>The digest is the SHA-256 of the rule's <em>canonical</em> definition: rule.yaml loaded and dumped again in a
 * fixed block style (comments, quoting and layout do not count; every key and value does).
 */
public final class CatalogLock {

    /** File name of the lock inside a catalog folder. */
    public static final String FILE_NAME = "catalog.lock";

    /** One locked rule. */
    public record Entry(String id, String version, String digest) {}

    private final Map<String, Entry> entries;

    private CatalogLock(Map<String, Entry> entries) {
        this.entries = entries;
    }

    public static CatalogLock of(List<Entry> entries) {
        Map<String, Entry> m = new LinkedHashMap<>();
        entries.stream().sorted(java.util.Comparator.comparing(Entry::id)).forEach(e -> m.put(e.id(), e));
        return new CatalogLock(m);
    }

    /** Parses a lock file's text; {@code #} starts a comment line. */
    public static CatalogLock parse(String text) {
        List<Entry> out = new ArrayList<>();
        int lineNo = 0;
        for (String line : text.split("\n")) {
            lineNo++;
            String l = line.strip();
            if (l.isEmpty() || l.startsWith("#")) {
                continue;
            }
            String[] f = l.split("\\s+");
            if (f.length != 3 || !f[2].startsWith("sha256:")) {
                throw new CatalogException(List.of(new CatalogProblem(
                        FILE_NAME, lineNo, 1, "a lock line is '<rule-id> <version> sha256:<hex>', found: " + l)));
            }
            out.add(new Entry(f[0], f[1], f[2]));
        }
        return of(out);
    }

    public List<Entry> entries() {
        return List.copyOf(entries.values());
    }

    public Optional<Entry> entry(String id) {
        return Optional.ofNullable(entries.get(id));
    }

    /** The lock file's text. */
    public String format() {
        StringBuilder sb = new StringBuilder();
        sb.append("# Lungflag rule catalog lock: <rule-id> <version> <digest of the canonical rule.yaml>.\n");
        sb.append("# Do not edit by hand. After bumping a rule's version, re-lock with:\n");
        sb.append("#   ").append(RELOCK_COMMAND).append('\n');
        for (Entry e : entries.values()) {
            sb.append(e.id())
                    .append(' ')
                    .append(e.version())
                    .append(' ')
                    .append(e.digest())
                    .append('\n');
        }
        return sb.toString();
    }

    /** The one command that re-locks the catalog (DEVELOPERS.md, "How to re-lock the catalog"). */
    public static final String RELOCK_COMMAND =
            "./mvnw -B -q -pl rules test -Dtest=CatalogLockTest -Dlungflag.catalog.relock=true -Dsurefire.failIfNoSpecifiedTests=false";

    /** {@code sha256:<hex>} of the canonical form of a rule.yaml text. */
    public static String digest(String ruleYaml) {
        return "sha256:" + sha256(canonical(ruleYaml));
    }

    /** The canonical form: loaded, then dumped in a fixed block style with LF line ends. */
    static String canonical(String ruleYaml) {
        Object doc = new Load(LoadSettings.builder().build()).loadFromString(ruleYaml);
        DumpSettings settings = DumpSettings.builder()
                .setDefaultFlowStyle(FlowStyle.BLOCK)
                .setIndent(2)
                .setWidth(Integer.MAX_VALUE)
                .setBestLineBreak("\n")
                .build();
        return new Dump(settings).dumpToString(doc);
    }

    private static String sha256(String text) {
        try {
            MessageDigest md = MessageDigest.getInstance("SHA-256");
            return HexFormat.of().formatHex(md.digest(text.getBytes(StandardCharsets.UTF_8)));
        } catch (NoSuchAlgorithmException e) {
            throw new IllegalStateException("SHA-256 is not available", e);
        }
    }
}
