package org.lungflag.rules.pairing;

import java.time.Duration;
import org.lungflag.rules.measure.QuantityKind;

/**
 * A kind the pairing looked for and did not find in force at the anchor.
 *
 * @param lookBack the longest window it searched (settings and measurements have their own look-backs), or {@code
 *     null} for kinds without one (height, weight)
 */
public record MissingInput(QuantityKind kind, Duration lookBack) {
    public String describe() {
        return lookBack == null
                ? kind.label() + " not on record"
                : kind.label() + " not in force at the anchor (looked back up to " + lookBack.toMinutes() + " min)";
    }
}
