package org.lungflag.rules.catalog;

/** A parameter override names an unknown rule or parameter, or has a value of the wrong type. */
public final class ParameterOverrideException extends RuntimeException {

    private final String key;

    public ParameterOverrideException(String key, String message) {
        super(key + ": " + message);
        this.key = key;
    }

    /** The offending key, {@code <rule-id>.<parameter>}. */
    public String key() {
        return key;
    }
}
