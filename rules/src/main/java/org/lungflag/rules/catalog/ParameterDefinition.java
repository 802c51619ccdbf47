package org.lungflag.rules.catalog;

/**
 * A declared rule parameter: every threshold a rule uses is one of these, never a literal in an expression.
 *
 * @param name the name used in expressions as {@code params.<name>}
 * @param unit UCUM unit of the value ({@code 1} for dimensionless), or empty for booleans and durations
 * @param defaultValue the default: a {@link Double}, {@link Long}, {@link Boolean} or {@link java.time.Duration}
 * @param source the id of the rule source that supports the default
 */
public record ParameterDefinition(
        String name, ParameterType type, String unit, Object defaultValue, String source, String description) {}
