package org.lungflag.rules.units;

import java.time.Instant;
import java.util.Objects;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.ValueRole;

/**
 * A numeric value as received at the edge, before unit conversion and checks: what the FHIR mapping (live) and the
 * NDJSON reader (replay) hand to {@link MeasurementNormalizer}.
 *
 * @param value any double, checked by the normalizer (NaN and infinities are refused there, not here)
 * @param ucumUnit the UCUM code as received ({@code Quantity.code}); {@code null} or blank is refused as unknown
 * @param specimen {@code null} means not stated: {@link SpecimenKind#UNKNOWN} for blood samples, {@link
 *     SpecimenKind#NOT_APPLICABLE} otherwise
 */
public record RawMeasurement(
        QuantityKind kind,
        double value,
        String ucumUnit,
        Instant time,
        ValueRole role,
        SpecimenKind specimen,
        SourceRef source) {

    public RawMeasurement {
        Objects.requireNonNull(kind, "kind");
        Objects.requireNonNull(time, "time");
        Objects.requireNonNull(role, "role");
        Objects.requireNonNull(source, "source");
        if (kind.isCategorical()) {
            throw new IllegalArgumentException(kind + " is categorical; map it to SupportState or PositionState");
        }
        if (specimen == null) {
            specimen = kind.isBloodSample() ? SpecimenKind.UNKNOWN : SpecimenKind.NOT_APPLICABLE;
        }
    }
}
