package org.lungflag.rules.engine;

import java.util.List;
import org.lungflag.rules.index.FormulaRef;
import org.lungflag.rules.index.IndexCode;
import org.lungflag.rules.measure.SourceRef;

/**
 * An index value an evaluation used, with the formula (id + version), the records it was computed from and the
 * calculator's notes (assumptions worth showing, e.g. which tidal volume was used).
 */
public record UsedIndex(
        IndexCode code, double value, String unit, FormulaRef formula, List<SourceRef> inputs, List<String> notes) {

    public UsedIndex {
        inputs = List.copyOf(inputs);
        notes = List.copyOf(notes);
    }
}
