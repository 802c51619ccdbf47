package org.lungflag.rules.measure;

import java.time.Instant;
import java.util.List;
import java.util.Objects;

/**
 * A numeric value in its kind's canonical unit, with everything the audit needs to explain it.
 *
 * @param kind what was measured or set
 * @param value the value in {@link QuantityKind#canonicalUnit()}
 * @param time clinical time (collection time for samples; effective time for device values)
 * @param role setting or measurement
 * @param specimen specimen kind for blood samples, {@link SpecimenKind#NOT_APPLICABLE} otherwise
 * @param source the record it came from (id + version)
 * @param original the value and unit as received, before conversion
 * @param repairs explicit, audited repairs applied on the way in (e.g. FiO2 0.4 charted with unit %); empty when
 *     none
 */
public record Measurement(
        QuantityKind kind,
        double value,
        Instant time,
        ValueRole role,
        SpecimenKind specimen,
        SourceRef source,
        OriginalQuantity original,
        List<UnitRepair> repairs)
        implements ClinicalFact {

    public Measurement {
        Objects.requireNonNull(kind, "kind");
        Objects.requireNonNull(time, "time");
        Objects.requireNonNull(role, "role");
        Objects.requireNonNull(specimen, "specimen");
        Objects.requireNonNull(source, "source");
        if (kind.isCategorical()) {
            throw new IllegalArgumentException(kind + " is categorical; use SupportState or PositionState");
        }
        if (!Double.isFinite(value)) {
            throw new IllegalArgumentException("a measurement value must be finite: " + value);
        }
        repairs = repairs == null ? List.of() : List.copyOf(repairs);
    }

    /** The canonical UCUM unit of {@link #value()}. */
    public String unit() {
        return kind.canonicalUnit();
    }
}
