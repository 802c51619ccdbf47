package org.lungflag.rules.engine;

import java.util.List;
import org.lungflag.rules.index.FormulaRef;
import org.lungflag.rules.index.IndexCode;
import org.lungflag.rules.measure.SourceRef;

/** An index value an evaluation used, with the formula (id + version) and the records it was computed from. */
public record UsedIndex(IndexCode code, double value, String unit, FormulaRef formula, List<SourceRef> inputs) {

    public UsedIndex {
        inputs = List.copyOf(inputs);
    }
}
