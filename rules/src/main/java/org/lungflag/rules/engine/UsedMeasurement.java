package org.lungflag.rules.engine;

import java.time.Instant;
import java.util.List;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.OriginalQuantity;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.measure.UnitRepair;
import org.lungflag.rules.measure.ValueRole;

/** A measurement an evaluation used: its converted value, its time and role, and the record it came from. */
public record UsedMeasurement(
        QuantityKind kind,
        double value,
        String unit,
        Instant time,
        ValueRole role,
        SourceRef source,
        OriginalQuantity original,
        List<UnitRepair> repairs) {

    public UsedMeasurement {
        repairs = repairs == null ? List.of() : List.copyOf(repairs);
    }

    static UsedMeasurement of(Measurement m) {
        return new UsedMeasurement(
                m.kind(), m.value(), m.unit(), m.time(), m.role(), m.source(), m.original(), m.repairs());
    }
}
