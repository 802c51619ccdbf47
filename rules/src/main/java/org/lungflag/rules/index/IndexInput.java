package org.lungflag.rules.index;

import java.util.Objects;
import org.lungflag.rules.measure.QuantityKind;

/**
 * One input of an index formula, for the index catalog.
 *
 * @param symbol the symbol used in the formula text, e.g. {@code PaO2}
 * @param kind the quantity kind it is read from, or {@code null} for patient facts, site parameters and other
 *     indices
 * @param unit the UCUM unit the formula expects
 * @param requirement what qualifies, in a plain sentence (specimen, role, look-back)
 */
public record IndexInput(String symbol, QuantityKind kind, String unit, String requirement) {
    public IndexInput {
        Objects.requireNonNull(symbol, "symbol");
        Objects.requireNonNull(unit, "unit");
        Objects.requireNonNull(requirement, "requirement");
    }
}
