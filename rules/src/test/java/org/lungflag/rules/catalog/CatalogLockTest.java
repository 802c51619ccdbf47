package org.lungflag.rules.catalog;

import static org.assertj.core.api.Assertions.assertThat;

import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * The committed lock guards every rule: a changed definition without a version bump fails the build, and the
 * message gives the one command that re-locks after a bump. Run with {@code -Dlungflag.catalog.relock=true} to
 * rewrite the lock; re-locking refuses a rule whose content changed while its version stayed the same.
 */
class CatalogLockTest {

    static final Path CATALOG = Path.of("catalog");
    static final Path LOCK = CATALOG.resolve(CatalogLock.FILE_NAME);

    @Test
    void every_rule_is_locked_at_its_current_version_and_digest() throws IOException {
        RuleCatalog catalog = RuleCatalog.load(CATALOG);
        CatalogLock locked = Files.exists(LOCK)
                ? CatalogLock.parse(Files.readString(LOCK, StandardCharsets.UTF_8))
                : CatalogLock.of(List.of());
        List<String> problems = problems(catalog, locked);

        if (Boolean.getBoolean("lungflag.catalog.relock")) {
            List<String> refusals = problems.stream()
                    .filter(p -> p.contains("without a version bump"))
                    .toList();
            assertThat(refusals)
                    .as("re-locking refuses rules changed without a version bump; bump their version first")
                    .isEmpty();
            Files.writeString(LOCK, catalog.lock().format(), StandardCharsets.UTF_8);
            return;
        }
        assertThat(problems)
                .as("catalog.lock is out of date. After bumping the version of every changed rule, re-lock with:\n  "
                        + CatalogLock.RELOCK_COMMAND)
                .isEmpty();
    }

    @Test
    void a_changed_rule_without_a_version_bump_is_reported_with_the_relock_command() {
        RuleCatalog catalog = RuleCatalog.load(CATALOG);
        RuleDefinition rule = catalog.rules().get(0);
        CatalogLock stale =
                CatalogLock.of(List.of(new CatalogLock.Entry(rule.id(), rule.version(), "sha256:" + "0".repeat(64))));
        assertThat(problems(catalog, stale))
                .anySatisfy(p -> assertThat(p).contains(rule.id()).contains("without a version bump"));
    }

    @Test
    void the_digest_ignores_comments_and_layout_but_not_content() {
        String a = "id: x\nversion: 1.0.0\n# a comment\nlist: [1, 2]\n";
        String b = "id:   x\nversion: '1.0.0'\nlist:\n  - 1\n  - 2\n";
        String c = "id: x\nversion: 1.0.0\nlist: [1, 3]\n";
        assertThat(CatalogLock.digest(a)).isEqualTo(CatalogLock.digest(b));
        assertThat(CatalogLock.digest(a)).isNotEqualTo(CatalogLock.digest(c));
    }

    static List<String> problems(RuleCatalog catalog, CatalogLock locked) {
        List<String> problems = new ArrayList<>();
        for (RuleDefinition r : catalog.rules()) {
            var entry = locked.entry(r.id());
            if (entry.isEmpty()) {
                problems.add(r.id() + " is not in catalog.lock (a new rule): lock it");
            } else if (entry.get().version().equals(r.version())
                    && !entry.get().digest().equals(r.digest())) {
                problems.add(r.id() + " " + r.version() + " changed without a version bump (locked digest "
                        + entry.get().digest() + ", now " + r.digest() + "): bump version in " + r.file());
            } else if (!entry.get().version().equals(r.version())) {
                problems.add(r.id() + " is at version " + r.version() + " but locked at "
                        + entry.get().version() + ": re-lock");
            }
        }
        for (CatalogLock.Entry e : locked.entries()) {
            if (catalog.rule(e.id()).isEmpty()) {
                problems.add(e.id() + " is locked but no longer in the catalog: re-lock");
            }
        }
        return problems;
    }
}
