package org.lungflag.rules.catalog;

/**
 * One problem found while loading a catalog, located in its file: {@code hypoxemia/rule.yaml:12:7: sentence}.
 *
 * @param file path relative to the catalog root, with forward slashes
 * @param line 1-based line, or 0 when the problem concerns the whole file
 * @param column 1-based column, or 0 when unknown
 * @param message a sentence a clinician-informaticist can act on
 */
public record CatalogProblem(String file, int line, int column, String message) implements Comparable<CatalogProblem> {

    @Override
    public String toString() {
        return line <= 0 ? file + ": " + message : file + ":" + line + ":" + column + ": " + message;
    }

    @Override
    public int compareTo(CatalogProblem o) {
        int c = file.compareTo(o.file);
        if (c != 0) {
            return c;
        }
        c = Integer.compare(line, o.line);
        return c != 0 ? c : Integer.compare(column, o.column);
    }
}
