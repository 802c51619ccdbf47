package org.lungflag.rules.index;

/** The outcome of one index formula at one anchor time: a number, or "not evaluable" with a reason. */
public sealed interface IndexResult permits IndexValue, NotEvaluable {

    IndexCode code();

    FormulaRef formula();

    default boolean isEvaluable() {
        return this instanceof IndexValue;
    }
}
