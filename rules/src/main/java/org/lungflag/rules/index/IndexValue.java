package org.lungflag.rules.index;

import java.util.List;
import org.lungflag.rules.measure.Measurement;

/**
 * A computed index.
 *
 * @param value the full-precision result in {@link IndexCode#unit()}; never rounded before a comparison
 * @param inputs the measurements it was computed from, with their sources (for derivedFrom and Provenance)
 * @param notes plain sentences about assumptions worth showing (e.g. "R = 0.8 assumed", "minute ventilation
 *     derived from tidal volume × rate"); empty when none
 */
public record IndexValue(IndexCode code, double value, FormulaRef formula, List<Measurement> inputs, List<String> notes)
        implements IndexResult {

    public IndexValue {
        if (!Double.isFinite(value)) {
            throw new IllegalArgumentException(code + " produced a non-finite value");
        }
        inputs = List.copyOf(inputs);
        notes = notes == null ? List.of() : List.copyOf(notes);
    }
}
