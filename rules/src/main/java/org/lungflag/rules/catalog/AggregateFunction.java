package org.lungflag.rules.catalog;

/** How a window aggregate combines the values in its window. */
public enum AggregateFunction {
    MIN,
    MAX,
    MEAN,
    FIRST,
    LAST,
    COUNT;

    static AggregateFunction fromYaml(String name) {
        for (AggregateFunction f : values()) {
            if (f.name().toLowerCase(java.util.Locale.ROOT).equals(name)) {
                return f;
            }
        }
        return null;
    }
}
