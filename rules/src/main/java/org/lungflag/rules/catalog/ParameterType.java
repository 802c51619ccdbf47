package org.lungflag.rules.catalog;

/** The type of a declared rule parameter. Durations feed the engine's temporal semantics, not CEL. */
public enum ParameterType {
    /** A decimal number, bound in CEL as {@code double}. */
    NUMBER("number"),
    /** A whole number, bound in CEL as {@code int}. */
    INTEGER("integer"),
    BOOLEAN("boolean"),
    /** A duration such as {@code 6h}, {@code 90m} or {@code 1d}; used by temporal settings and windows. */
    DURATION("duration");

    private final String yamlName;

    ParameterType(String yamlName) {
        this.yamlName = yamlName;
    }

    public String yamlName() {
        return yamlName;
    }

    static ParameterType fromYaml(String name) {
        for (ParameterType t : values()) {
            if (t.yamlName.equals(name)) {
                return t;
            }
        }
        return null;
    }
}
