package org.lungflag.rules.catalog;

import java.util.Optional;
import org.lungflag.rules.index.IndexCode;
import org.lungflag.rules.measure.QuantityKind;

/**
 * A window aggregate the engine computes before the conditions run, e.g. "lowest ventilatory ratio over the last 24
 * h". Over an index, the values are those computed at this rule's own evaluations in the window (the current one
 * included); over a quantity kind, the charted values in the window (arterial only for blood gases).
 *
 * @param name the CEL variable name; {@code <name>_available} and {@code <name>_count} are bound too
 * @param index the index aggregated, or {@code null} when {@link #kind} is set
 * @param kind the quantity kind aggregated, or {@code null} when {@link #index} is set
 * @param windowParameter the name of a duration parameter giving the window length
 */
public record Aggregate(
        String name, AggregateFunction function, IndexCode index, QuantityKind kind, String windowParameter) {

    public Optional<IndexCode> indexCode() {
        return Optional.ofNullable(index);
    }

    public Optional<QuantityKind> quantityKind() {
        return Optional.ofNullable(kind);
    }
}
