package org.lungflag.rules.measure;

/**
 * The quantity kinds Lungflag consumes, each with its canonical UCUM unit (clinical-reference §0): blood-gas
 * pressures in mmHg, airway pressures in cmH2O, volumes in mL, minute ventilation and gas flow in L/min, FiO2
 * and saturations as a fraction 0–1 (shown as % at the edges).
 *
 * <p>Categorical kinds ({@link #RESPIRATORY_SUPPORT}, {@link #BODY_POSITION}) have no unit; they arrive as
 * {@link SupportState} and {@link PositionState} rather than {@link Measurement}.
 */
public enum QuantityKind {
    PAO2("mm[Hg]", "PaO2", true),
    PACO2("mm[Hg]", "PaCO2", true),
    PH("[pH]", "pH", true),
    SAO2("1", "SaO2", true),
    SPO2("1", "SpO2", false),
    FIO2("1", "FiO2", false),
    O2_FLOW("L/min", "O2 flow", false),
    PEEP("cm[H2O]", "PEEP", false),
    PLATEAU_PRESSURE("cm[H2O]", "Plateau pressure", false),
    PEAK_PRESSURE("cm[H2O]", "Peak pressure", false),
    MEAN_AIRWAY_PRESSURE("cm[H2O]", "Mean airway pressure", false),
    /** Set tidal volume when {@link ValueRole#SETTING}; delivered (inspired) tidal volume when measured. */
    TIDAL_VOLUME("mL", "Tidal volume", false),
    TIDAL_VOLUME_EXPIRED("mL", "Expired tidal volume", false),
    /** Set rate when {@link ValueRole#SETTING}; total (spontaneous + mechanical) rate when measured. */
    RESPIRATORY_RATE("/min", "Respiratory rate", false),
    MINUTE_VENTILATION("L/min", "Minute ventilation", false),
    INSPIRATORY_FLOW("L/min", "Inspiratory flow", false),
    ETCO2("mm[Hg]", "End-tidal PCO2", false),
    MIXED_EXPIRED_PCO2("mm[Hg]", "Mixed-expired PCO2", false),
    HEMOGLOBIN("g/dL", "Hemoglobin", true),
    BODY_HEIGHT("cm", "Body height", false),
    BODY_WEIGHT("kg", "Body weight", false),
    BAROMETRIC_PRESSURE("mm[Hg]", "Barometric pressure", false),
    RESPIRATORY_SUPPORT(null, "Respiratory support", false),
    BODY_POSITION(null, "Body position", false);

    private final String canonicalUnit;
    private final String label;
    private final boolean bloodSample;

    QuantityKind(String canonicalUnit, String label, boolean bloodSample) {
        this.canonicalUnit = canonicalUnit;
        this.label = label;
        this.bloodSample = bloodSample;
    }

    /** UCUM code of the canonical unit, or {@code null} for categorical kinds. */
    public String canonicalUnit() {
        return canonicalUnit;
    }

    /** Short human label, e.g. "PaO2". Safe for logs (no patient data). */
    public String label() {
        return label;
    }

    /** True when the value comes from a blood sample, so its specimen kind matters. */
    public boolean isBloodSample() {
        return bloodSample;
    }

    public boolean isCategorical() {
        return canonicalUnit == null;
    }

    /**
     * True for facts that stay in force until replaced, however old: respiratory support, body position, height
     * and weight. A timeline keeps the latest of these even when it lies before the window.
     */
    public boolean staysInForce() {
        return isCategorical() || this == BODY_HEIGHT || this == BODY_WEIGHT;
    }
}
