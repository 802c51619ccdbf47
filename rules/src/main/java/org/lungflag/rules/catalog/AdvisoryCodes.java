package org.lungflag.rules.catalog;

import java.util.List;

/**
 * The advisory codes of the CodeSystem {@code http://lungflag.org/fhir/CodeSystem/advisory} (design.md). A rule
 * tier may use only these, and each is used by exactly one rule of the default catalog.
 */
public final class AdvisoryCodes {

    public static final String SYSTEM = "http://lungflag.org/fhir/CodeSystem/advisory";

    public static final List<String> ALL = List.of(
            "hypoxemia-mild",
            "hypoxemia-moderate",
            "hypoxemia-severe",
            "dead-space-rising",
            "prone-criteria-met",
            "tidal-volume-high",
            "plateau-pressure-high",
            "driving-pressure-high",
            "pediatric-hypoxemia-mild-moderate",
            "pediatric-hypoxemia-severe");

    private AdvisoryCodes() {}

    public static boolean isKnown(String code) {
        return ALL.contains(code);
    }
}
