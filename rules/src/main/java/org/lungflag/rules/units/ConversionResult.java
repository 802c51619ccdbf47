package org.lungflag.rules.units;

import java.util.Objects;
import org.lungflag.rules.quality.DataQualityReason;

/** The outcome of a unit conversion: a value in the target unit, or a refusal with its reason. */
public sealed interface ConversionResult {

    /** A converted value. */
    record Converted(double value, String unit) implements ConversionResult {}

    /** Not converted: {@link DataQualityReason#UNKNOWN_UNIT}, {@link DataQualityReason#INCOMPATIBLE_UNIT} or {@link
     * DataQualityReason#NON_FINITE_VALUE}. */
    record Failed(DataQualityReason reason, String detail) implements ConversionResult {
        public Failed {
            Objects.requireNonNull(reason, "reason");
            Objects.requireNonNull(detail, "detail");
        }
    }
}
