package org.lungflag.rules.catalog;

import java.util.Optional;

/**
 * The temporal semantics the engine supplies for a rule. Every value is the name of a declared parameter (durations
 * and counts are thresholds too), so sites tune them without touching expressions.
 *
 * @param sustainedParameter onset needs a tier met continuously for this duration (no evaluation in between with
 *     no tier met); {@code null} for none
 * @param consecutiveCountParameter onset needs this many qualifying readings in a row; {@code null} for none
 * @param consecutiveSpacingParameter ... each counted reading at least this long after the previous counted one
 * @param resolveAfterParameter an active episode resolves after this long with no tier met (hysteresis)
 * @param expireAfterParameter an active episode expires after this long without an evaluable evaluation
 */
public record Temporal(
        String sustainedParameter,
        String consecutiveCountParameter,
        String consecutiveSpacingParameter,
        String resolveAfterParameter,
        String expireAfterParameter) {

    public Optional<String> sustained() {
        return Optional.ofNullable(sustainedParameter);
    }

    public Optional<String> consecutiveCount() {
        return Optional.ofNullable(consecutiveCountParameter);
    }
}
