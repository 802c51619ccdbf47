package org.lungflag.rules.index;

import org.lungflag.rules.quality.DataQualityReason;

/**
 * An index that could not be computed, and why. Never a number.
 *
 * @param detail a plain sentence with the specifics (kind, look-back, value), no patient data
 */
public record NotEvaluable(IndexCode code, FormulaRef formula, DataQualityReason reason, String detail)
        implements IndexResult {}
