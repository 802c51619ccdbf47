package org.lungflag.rules.pairing;

import java.time.Duration;
import org.lungflag.rules.measure.QuantityKind;

/**
 * A kind the pairing looked for and did not find in force at the anchor.
 *
 * @param lookBack the window it searched, or {@code null} for kinds without one (height, weight)
 */
public record MissingInput(QuantityKind kind, Duration lookBack) {
    public String describe() {
        return lookBack == null
                ? kind.label() + " not on record"
                : kind.label() + " not charted within " + lookBack.toMinutes() + " min before the anchor";
    }
}
