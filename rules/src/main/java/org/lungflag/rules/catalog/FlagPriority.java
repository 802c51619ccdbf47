package org.lungflag.rules.catalog;

import java.util.Arrays;
import java.util.Optional;

/**
 * How prominently an advisory should be shown: the FHIR flag-priority codes (CodeSystem {@code
 * http://hl7.org/fhir/flag-priority-code}, used with the {@code flag-priority} extension).
 */
public enum FlagPriority {
    PN("No alarm"),
    PL("Low priority"),
    PM("Medium priority"),
    PH("High priority");

    public static final String SYSTEM = "http://hl7.org/fhir/flag-priority-code";

    private final String display;

    FlagPriority(String display) {
        this.display = display;
    }

    public String code() {
        return name();
    }

    public String display() {
        return display;
    }

    public static Optional<FlagPriority> fromCode(String code) {
        return Arrays.stream(values()).filter(p -> p.name().equals(code)).findFirst();
    }
}
