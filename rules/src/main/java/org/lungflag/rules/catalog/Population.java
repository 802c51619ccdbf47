package org.lungflag.rules.catalog;

/** Who a rule is for, by age in completed years at the anchor time. */
public enum Population {
    /** 18 years or older at the anchor. */
    ADULT("adult"),
    /** Younger than 18 at the anchor. */
    PEDIATRIC("pediatric"),
    ANY("any");

    /** Age, in completed years, from which a patient is an adult. */
    public static final int ADULT_AGE_YEARS = 18;

    private final String yamlName;

    Population(String yamlName) {
        this.yamlName = yamlName;
    }

    public String yamlName() {
        return yamlName;
    }

    static Population fromYaml(String name) {
        for (Population p : values()) {
            if (p.yamlName.equals(name)) {
                return p;
            }
        }
        return null;
    }
}
