package org.lungflag.rules.engine;

/** What one evaluation of one rule found, in terms of the patient's episode for that rule. */
public enum Outcome {
    /** A tier is met (and any onset qualifier satisfied); a new episode starts. */
    ONSET,
    /** The active episode's tier is met again. */
    ONGOING,
    /** A more severe tier than the active episode's is met. */
    ESCALATED,
    /** A milder tier than the active episode's is met. */
    DE_ESCALATED,
    /** The active episode ends: no tier met for the rule's resolve-after duration. */
    RESOLVED,
    /** The active episode ends: no evaluable data for the rule's expire-after duration. */
    EXPIRED,
    /** Evaluated; no tier met (an active episode stays active until it resolves). */
    NOT_MET,
    /** Could not be evaluated; the reason is a data-quality code. */
    NOT_EVALUABLE;

    /** Whether this outcome means a tier is met and an episode is active with it. */
    public boolean isActiveTier() {
        return this == ONSET || this == ONGOING || this == ESCALATED || this == DE_ESCALATED;
    }
}
