package org.lungflag.rules.catalog;

/**
 * One graded tier of a rule. Tiers are listed mildest first; the engine reports the most severe tier whose
 * condition holds.
 *
 * @param code the advisory code (CodeSystem {@code http://lungflag.org/fhir/CodeSystem/advisory})
 * @param display the advisory's short display text
 * @param priority the Flag priority
 * @param condition the CEL condition, as written in rule.yaml
 * @param rank 0 for the mildest tier, increasing with severity
 */
public record Tier(String code, String display, FlagPriority priority, String condition, int rank) {}
