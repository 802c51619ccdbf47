package org.lungflag.rules.measure;

import java.time.Instant;

/**
 * One normalized fact on a patient's timeline: a numeric {@link Measurement}, or a categorical state change
 * ({@link SupportState}, {@link PositionState}). Facts are ordered by clinical time, then by source reference, so
 * that ordering never depends on arrival.
 */
public sealed interface ClinicalFact permits Measurement, SupportState, PositionState {

    /** Clinical time: when the sample was collected or the setting was in force, never when it was filed. */
    Instant time();

    SourceRef source();

    QuantityKind kind();
}
