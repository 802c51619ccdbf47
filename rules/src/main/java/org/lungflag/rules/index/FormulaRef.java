package org.lungflag.rules.index;

/**
 * Which formula, in which version, produced a value: e.g. {@code pf-ratio} version {@code 1}. Carried by every
 * derived value, audit row and Observation.method so an old result can always be explained.
 */
public record FormulaRef(String id, String version) {
    @Override
    public String toString() {
        return id + "@" + version;
    }
}
