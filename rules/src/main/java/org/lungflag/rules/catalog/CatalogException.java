package org.lungflag.rules.catalog;

import java.util.List;
import java.util.stream.Collectors;

/** A catalog failed to load. The message lists every problem, one per line, as {@code file:line:col: sentence}. */
public final class CatalogException extends RuntimeException {

    private final List<CatalogProblem> problems;

    public CatalogException(List<CatalogProblem> problems) {
        super(problems.stream().sorted().map(CatalogProblem::toString).collect(Collectors.joining("\n")));
        this.problems = problems.stream().sorted().toList();
    }

    public List<CatalogProblem> problems() {
        return problems;
    }
}
