package org.lungflag.rules.measure;

import java.time.Instant;
import java.util.Objects;

/** The body position from {@link #time()} on (e.g. the start of a prone session). */
public record PositionState(BodyPosition position, Instant time, SourceRef source) implements ClinicalFact {

    public PositionState {
        Objects.requireNonNull(position, "position");
        Objects.requireNonNull(time, "time");
        Objects.requireNonNull(source, "source");
    }

    @Override
    public QuantityKind kind() {
        return QuantityKind.BODY_POSITION;
    }
}
