package org.lungflag.rules.catalog;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.catchThrowableOfType;

import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.stream.Stream;
import org.junit.jupiter.api.DynamicTest;
import org.junit.jupiter.api.TestFactory;

/**
 * Golden bad catalogs: each folder under {@code src/test/resources/bad-catalog/<case>/} is a catalog with one
 * mistake, and {@code expected-error.txt} holds the exact message the loader must give ({@code file:line:col:
 * sentence}, one problem per line). Set {@code -Dlungflag.golden.update=true} to rewrite them after a deliberate
 * wording change, then review the diff.
 */
class BadCatalogTest {

    static final Path ROOT = Path.of("src/test/resources/bad-catalog");

    @TestFactory
    Stream<DynamicTest> every_bad_catalog_fails_to_load_with_its_expected_located_message() throws IOException {
        try (Stream<Path> cases = Files.list(ROOT)) {
            return cases.filter(Files::isDirectory).sorted().toList().stream()
                    .map(dir -> DynamicTest.dynamicTest(dir.getFileName().toString(), () -> check(dir)));
        }
    }

    private static void check(Path dir) throws IOException {
        CatalogException e = catchThrowableOfType(() -> RuleCatalog.load(dir), CatalogException.class);
        assertThat(e).as("loading %s must fail", dir).isNotNull();
        Path expected = dir.resolve("expected-error.txt");
        if (Boolean.getBoolean("lungflag.golden.update")) {
            Files.writeString(expected, e.getMessage() + "\n", StandardCharsets.UTF_8);
        }
        assertThat(e.getMessage())
                .isEqualTo(Files.readString(expected, StandardCharsets.UTF_8).strip());
    }
}
