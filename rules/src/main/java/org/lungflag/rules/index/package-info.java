/**
 * The derived respiratory indices: each a named, versioned formula ({@link org.lungflag.rules.index.FormulaRef})
 * listed with its inputs, unit, validity and published source in {@link org.lungflag.rules.index.IndexDefinitions};
 * the formulas as pure functions in {@link org.lungflag.rules.index.Formulas}; and {@link
 * org.lungflag.rules.index.IndexCalculator}, which computes every index at an anchor from the paired inputs,
 * returning a number only when the inputs qualify and a {@link org.lungflag.rules.index.NotEvaluable} reason
 * otherwise. Site constants (barometric pressure, PH2O, R, Hüfner constant, alveolar gas form) are {@link
 * org.lungflag.rules.index.SiteParameters}.
 */
package org.lungflag.rules.index;
