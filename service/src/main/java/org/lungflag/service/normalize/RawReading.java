package org.lungflag.service.normalize;

import java.time.Instant;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.ValueRole;

/**
 * One numeric value read off an Observation (or one of its components), before unit conversion.
 *
 * @param part where it came from, for messages: {@code value} or {@code component[2]}
 * @param unit the UCUM code as sent (Quantity.code when the system is UCUM, else Quantity.code or unit), or
 *     {@code null} when the Quantity has none
 */
public record RawReading(
        QuantityKind kind,
        double value,
        String unit,
        Instant time,
        ValueRole role,
        SpecimenKind specimen,
        SourceRef source,
        String part) {}
