package org.lungflag.rules.measure;

import java.time.Instant;
import java.util.Objects;

/**
 * The respiratory support in force from {@link #time()} on.
 *
 * @param flowLitresPerMinute oxygen or gas flow for high-flow and conventional oxygen, or {@code null} if not charted
 */
public record SupportState(SupportMode mode, Double flowLitresPerMinute, Instant time, SourceRef source)
        implements ClinicalFact {

    public SupportState {
        Objects.requireNonNull(mode, "mode");
        Objects.requireNonNull(time, "time");
        Objects.requireNonNull(source, "source");
    }

    @Override
    public QuantityKind kind() {
        return QuantityKind.RESPIRATORY_SUPPORT;
    }
}
