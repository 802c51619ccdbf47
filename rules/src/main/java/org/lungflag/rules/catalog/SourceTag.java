package org.lungflag.rules.catalog;

/** How well a rule source supports what it is cited for. */
public enum SourceTag {
    /** A published definition, guideline or trial. */
    PUBLISHED("published"),
    /** No published threshold exists; a convention or a judgement. Shown as "rule of thumb, validate locally". */
    RULE_OF_THUMB("rule-of-thumb"),
    /** Could not be checked against the primary publication; say so wherever it is shown. */
    UNVERIFIED("unverified");

    private final String yamlName;

    SourceTag(String yamlName) {
        this.yamlName = yamlName;
    }

    public String yamlName() {
        return yamlName;
    }

    static SourceTag fromYaml(String name) {
        for (SourceTag t : values()) {
            if (t.yamlName.equals(name)) {
                return t;
            }
        }
        return null;
    }
}
