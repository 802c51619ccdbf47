package org.lungflag.rules.catalog;

/** The caution texts every advisory carries (design.md, "Clinical scope and wording"). */
public final class Cautions {

    /** Added to every advisory. */
    public static final String GENERAL = "Advisory only: computed from charted data that may be wrong or late. Confirm"
            + " at the bedside. Contraindications are not assessed. Follow local protocols and the treating"
            + " clinician's judgment.";

    /** Added to every result that used a pulse-oximetry SpO2. */
    public static final String PULSE_OXIMETRY = "Based on pulse oximetry: SpO2 can over-read (hiding hypoxemia) with"
            + " dark skin pigmentation, poor perfusion and dyshemoglobins (carboxy- or methemoglobin).";

    private Cautions() {}
}
