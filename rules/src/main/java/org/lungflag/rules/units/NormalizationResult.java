package org.lungflag.rules.units;

import java.util.Objects;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.quality.DataQualityReason;

/** What {@link MeasurementNormalizer} made of a raw value: accepted as a canonical measurement, or refused. */
public sealed interface NormalizationResult {

    default boolean isAccepted() {
        return this instanceof Accepted;
    }

    /** Accepted; {@link Measurement#repairs()} lists any audited repair. */
    record Accepted(Measurement measurement) implements NormalizationResult {
        public Accepted {
            Objects.requireNonNull(measurement, "measurement");
        }
    }

    /**
     * Refused (quarantined).
     *
     * @param detail names the kind, value and unit that were wrong; never patient data
     */
    record Refused(DataQualityReason reason, String detail) implements NormalizationResult {
        public Refused {
            Objects.requireNonNull(reason, "reason");
            Objects.requireNonNull(detail, "detail");
            if (reason.use() != DataQualityReason.Use.REFUSED) {
                throw new IllegalArgumentException(reason + " is not a refusal reason");
            }
        }
    }
}
