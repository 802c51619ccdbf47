package org.lungflag.rules.catalog;

import java.util.ArrayList;
import java.util.List;

/** Collects located problems while a catalog is read and checked. */
final class Problems {

    private final List<CatalogProblem> list = new ArrayList<>();

    void add(String file, int line, int column, String message) {
        list.add(new CatalogProblem(file, line, column, message));
    }

    void at(YamlNode node, String message) {
        list.add(new CatalogProblem(node.file(), node.line(), node.column(), message));
    }

    boolean isEmpty() {
        return list.isEmpty();
    }

    int size() {
        return list.size();
    }

    List<CatalogProblem> list() {
        return List.copyOf(list);
    }

    void throwIfAny() {
        if (!list.isEmpty()) {
            throw new CatalogException(list);
        }
    }
}
