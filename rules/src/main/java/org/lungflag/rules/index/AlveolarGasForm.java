package org.lungflag.rules.index;

/** Which form of the alveolar gas equation a site uses (clinical-reference §1.1). */
public enum AlveolarGasForm {
    /** PAO2 = FiO2 × (Pb − PH2O) − PaCO2 / R: the form most teaching texts and calculators use (the default). */
    SIMPLIFIED("simplified alveolar gas equation", "FiO2 × (Pb − PH2O) − PaCO2 / R"),
    /** PAO2 = FiO2 × (Pb − PH2O) − PaCO2 × [FiO2 + (1 − FiO2) / R]: the full ("ideal alveolar air") form. */
    FULL("full alveolar gas equation", "FiO2 × (Pb − PH2O) − PaCO2 × [FiO2 + (1 − FiO2) / R]");

    private final String label;
    private final String formula;

    AlveolarGasForm(String label, String formula) {
        this.label = label;
        this.formula = formula;
    }

    /** A plain name for notes and the index catalog. */
    public String label() {
        return label;
    }

    /** The equation as text. */
    public String formula() {
        return formula;
    }
}
