package org.lungflag.rules.index;

import java.util.ArrayList;
import java.util.Collections;
import java.util.EnumMap;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import org.lungflag.rules.measure.QuantityKind;

/**
 * The registry of every index formula: the service's index catalog and the conformance CodeSystem are generated
 * from (or checked against) this list. Each {@link IndexCode} has exactly one default definition; the indices
 * built on the alveolar gas equation have one definition per {@link AlveolarGasForm}, chosen by {@link
 * SiteParameters#alveolarGasForm()}.
 *
 * <p>Changing a formula's arithmetic means a new version in its {@link FormulaRef}; the old version stays
 * explainable from the audit.
 */
public final class IndexDefinitions {

    // --- citations (clinical-reference §14, with its source tags) --------------------------------------------
    static final String BERLIN = "ARDS Definition Task Force; Ranieri VM et al. Acute respiratory distress syndrome:"
            + " the Berlin Definition. JAMA 2012;307(23):2526–2533 [PUB-2]";
    static final String RICE_GLOBAL = "Rice TW et al. Comparison of the SpO2/FIO2 ratio and the PaO2/FIO2 ratio in"
            + " patients with acute lung injury or ARDS. Chest 2007;132(2):410–417 [PUB-V]; SpO2 ≤ 97 %: Matthay MA et"
            + " al. A New Global Definition of ARDS. Am J Respir Crit Care Med 2024;209(1):37–47 [PUB-V]";
    static final String ALVEOLAR = "Alveolar gas equation as quoted by teaching sources (L. Martin, \"The four most"
            + " important equations in clinical practice\"; calculator pages), clinical-reference §1.1 [PUB-2]";
    static final String OI_OSI = "Thomas NJ et al. Defining acute lung disease in children with the oxygenation"
            + " saturation index. Pediatr Crit Care Med 2010;11(1):12–17 [PUB-V]; Pediatric Acute Lung Injury"
            + " Consensus Conference Group. Pediatr Crit Care Med 2015;16(5):428–439 [PUB-2]";
    static final String SINHA = "Sinha P, Fauvel NJ, Singh S, Soni N. Ventilatory ratio: a simple bedside measure of"
            + " ventilation. Br J Anaesth 2009;102(5):692–697 [PUB-V]; 37.5 mmHg form: Sinha P et al. Am J Respir Crit"
            + " Care Med 2019;199(3):333–341 [PUB-V]";
    static final String ENGHOFF = "Bohr equation with Enghoff's modification (arterial PaCO2); Nuckton TJ et al. N Engl"
            + " J Med 2002;346(17):1281–1286 [PUB-V]; Tusman G et al. Anesth Analg 2012;114(4):866–874 [PUB-V]";
    static final String GRADIENT_CO2 = "Common practice, no source (clinical-reference §5.5 [CP])";
    static final String ARDSNET = "The Acute Respiratory Distress Syndrome Network. N Engl J Med"
            + " 2000;342(18):1301–1308, and the NIH NHLBI ARDS Network protocol card [PUB-2]";
    static final String AMATO = "Amato MBP et al. Driving pressure and survival in the acute respiratory distress"
            + " syndrome. N Engl J Med 2015;372(8):747–755 [PUB-V]";
    static final String COMPLIANCE =
            "Common practice (clinical-reference §6.4 [CP]; definition as in PMC7449829" + " Table 1 [PUB-V])";
    static final String MECHANICAL_POWER = "Gattinoni L et al. Ventilator-related causes of lung injury: the mechanical"
            + " power. Intensive Care Med 2016;42(10):1567–1575 [PUB-V]; surrogate form as used by Serpa Neto A et al."
            + " Intensive Care Med 2018;44:1914–1922 and compared by Chiumello D et al. Crit Care 2020;24:417"
            + " [PUB-2/MEM]";
    static final String OXYGEN_CONTENT = "Oxygen content of blood as given by anaesthesia teaching sources (Anaesthesia"
            + " UK; e-Safe Anaesthesia), clinical-reference §7.1 [PUB-2]";

    // --- inputs ------------------------------------------------------------------------------------------------
    private static final IndexInput PAO2 = new IndexInput(
            "PaO2", QuantityKind.PAO2, "mm[Hg]", "arterial sample only (venous, capillary, unspecified refused)");
    private static final IndexInput PACO2 =
            new IndexInput("PaCO2", QuantityKind.PACO2, "mm[Hg]", "arterial sample only");
    private static final IndexInput FIO2 = new IndexInput(
            "FiO2", QuantityKind.FIO2, "1", "fraction in force at the anchor (setting or measurement, look-back)");
    private static final IndexInput SPO2 =
            new IndexInput("SpO2", QuantityKind.SPO2, "%", "pulse oximetry within the measurement look-back; ≤ 97 %");
    private static final IndexInput MEAN_AIRWAY = new IndexInput(
            "MAP",
            QuantityKind.MEAN_AIRWAY_PRESSURE,
            "cm[H2O]",
            "mean AIRWAY pressure (not mean arterial pressure) within the look-back");
    private static final IndexInput PB = new IndexInput(
            "Pb",
            QuantityKind.BAROMETRIC_PRESSURE,
            "mm[Hg]",
            "barometric pressure charted at the anchor, else the site's configured value, else 760 (noted)");
    private static final IndexInput SITE_PB =
            new IndexInput("Pb", null, "mm[Hg]", "the site's configured barometric pressure (site parameter)");
    private static final IndexInput PH2O =
            new IndexInput("PH2O", null, "mm[Hg]", "site parameter, default 47 mmHg (37 °C)");
    private static final IndexInput R = new IndexInput("R", null, "1", "site parameter, default 0.8");
    private static final IndexInput PF = new IndexInput("P/F", null, "mm[Hg]", "the pf-ratio index at the anchor");
    private static final IndexInput PAO2_ALV =
            new IndexInput("PAO2", null, "mm[Hg]", "the alveolar-oxygen index at the anchor");
    private static final IndexInput PBW =
            new IndexInput("PBW", null, "kg", "the predicted-body-weight index (height and sex)");
    private static final IndexInput HEIGHT =
            new IndexInput("height", QuantityKind.BODY_HEIGHT, "cm", "latest body height on record");
    private static final IndexInput SEX =
            new IndexInput("sex", null, "", "sex for clinical use (male or female); unknown is refused");
    private static final IndexInput VT = new IndexInput(
            "VT",
            QuantityKind.TIDAL_VOLUME_EXPIRED,
            "mL",
            "measured expired tidal volume, else measured delivered tidal volume, else the set tidal volume (noted)");
    private static final IndexInput VE = new IndexInput(
            "VE",
            QuantityKind.MINUTE_VENTILATION,
            "mL/min",
            "measured minute ventilation, else measured tidal volume × measured respiratory rate (noted)");
    private static final IndexInput PECO2 = new IndexInput(
            "PECO2",
            QuantityKind.MIXED_EXPIRED_PCO2,
            "mm[Hg]",
            "mixed-expired PCO2 (timed collection or volumetric capnography); never end-tidal PCO2");
    private static final IndexInput ETCO2 =
            new IndexInput("PetCO2", QuantityKind.ETCO2, "mm[Hg]", "end-tidal PCO2 within the measurement look-back");
    private static final IndexInput PPLAT = new IndexInput(
            "Pplat",
            QuantityKind.PLATEAU_PRESSURE,
            "cm[H2O]",
            "plateau pressure (inspiratory hold, passive patient) within the look-back");
    private static final IndexInput PEEP = new IndexInput(
            "PEEP", QuantityKind.PEEP, "cm[H2O]", "PEEP in force (setting or measurement); total PEEP if charted");
    private static final IndexInput PPEAK =
            new IndexInput("Ppeak", QuantityKind.PEAK_PRESSURE, "cm[H2O]", "peak airway pressure within the look-back");
    private static final IndexInput RR = new IndexInput(
            "RR", QuantityKind.RESPIRATORY_RATE, "/min", "measured total rate, else the set rate (noted)");
    private static final IndexInput HB =
            new IndexInput("Hb", QuantityKind.HEMOGLOBIN, "g/dL", "hemoglobin within the measurement look-back");
    private static final IndexInput SAO2 =
            new IndexInput("SaO2", QuantityKind.SAO2, "1", "arterial saturation (co-oximetry), arterial sample only");
    private static final IndexInput K =
            new IndexInput("k", null, "mL/g", "Hüfner constant, site parameter, default 1.34 (shown in the notes)");

    // --- definitions ---------------------------------------------------------------------------------------------
    public static final IndexDefinition PF_RATIO = new IndexDefinition(
            IndexCode.PF_RATIO,
            new FormulaRef("pf-ratio", "1"),
            "P/F = PaO2 [mmHg] / FiO2 [fraction]",
            List.of(PAO2, FIO2),
            "mm[Hg]",
            "Arterial PaO2 only; FiO2 in force at the collection time. Full precision, no rounding. Depends on FiO2"
                    + " and PEEP even at a constant degree of lung injury.",
            BERLIN);

    public static final IndexDefinition PF_RATIO_ALTITUDE_ADJUSTED = new IndexDefinition(
            IndexCode.PF_RATIO_ALTITUDE_ADJUSTED,
            new FormulaRef("pf-ratio-altitude-adjusted", "1"),
            "P/F × (Pb / 760)",
            List.of(PF, SITE_PB),
            "mm[Hg]",
            "Only where the site configures its barometric pressure (altitude above about 1000 m); never a"
                    + " per-patient guess. Shown next to the unadjusted ratio.",
            BERLIN + " (altitude footnote)");

    public static final IndexDefinition SF_RATIO = new IndexDefinition(
            IndexCode.SF_RATIO,
            new FormulaRef("sf-ratio", "1"),
            "S/F = SpO2 [%] / FiO2 [fraction]",
            List.of(SPO2, FIO2),
            "1",
            "Only with SpO2 ≤ 97 % (97 itself is valid); on the flat part of the dissociation curve S/F carries no"
                    + " information. Pulse oximetry may over-read with dark skin pigmentation, poor perfusion or"
                    + " dyshemoglobins.",
            RICE_GLOBAL);

    public static final IndexDefinition ALVEOLAR_OXYGEN_SIMPLIFIED = new IndexDefinition(
            IndexCode.ALVEOLAR_OXYGEN,
            new FormulaRef("alveolar-gas-simplified", "1"),
            "PAO2 = " + AlveolarGasForm.SIMPLIFIED.formula(),
            List.of(FIO2, PB, PH2O, PACO2, R),
            "mm[Hg]",
            "Arterial PaCO2 stands in for alveolar PCO2 (breaks down with large dead space). Underestimates PAO2 at"
                    + " FiO2 1.0 by PaCO2 × (1 − R)/R. R assumed (default 0.8).",
            ALVEOLAR);

    public static final IndexDefinition ALVEOLAR_OXYGEN_FULL = new IndexDefinition(
            IndexCode.ALVEOLAR_OXYGEN,
            new FormulaRef("alveolar-gas-full", "1"),
            "PAO2 = " + AlveolarGasForm.FULL.formula(),
            List.of(FIO2, PB, PH2O, PACO2, R),
            "mm[Hg]",
            "Arterial PaCO2 stands in for alveolar PCO2 (breaks down with large dead space). R assumed (default"
                    + " 0.8).",
            ALVEOLAR);

    public static final IndexDefinition AA_GRADIENT_SIMPLIFIED = new IndexDefinition(
            IndexCode.AA_GRADIENT,
            new FormulaRef("aa-gradient-simplified", "1"),
            "A–a = PAO2 − PaO2, PAO2 by the " + AlveolarGasForm.SIMPLIFIED.label(),
            List.of(PAO2_ALV, PAO2),
            "mm[Hg]",
            "Arterial PaO2 only. Rises with FiO2 even in normal lungs; age-expected values apply to room air only.",
            ALVEOLAR);

    public static final IndexDefinition AA_GRADIENT_FULL = new IndexDefinition(
            IndexCode.AA_GRADIENT,
            new FormulaRef("aa-gradient-full", "1"),
            "A–a = PAO2 − PaO2, PAO2 by the " + AlveolarGasForm.FULL.label(),
            List.of(PAO2_ALV, PAO2),
            "mm[Hg]",
            "Arterial PaO2 only. Rises with FiO2 even in normal lungs; age-expected values apply to room air only.",
            ALVEOLAR);

    public static final IndexDefinition ARTERIAL_ALVEOLAR_RATIO_SIMPLIFIED = new IndexDefinition(
            IndexCode.ARTERIAL_ALVEOLAR_RATIO,
            new FormulaRef("arterial-alveolar-ratio-simplified", "1"),
            "a/A = PaO2 / PAO2, PAO2 by the " + AlveolarGasForm.SIMPLIFIED.label(),
            List.of(PAO2, PAO2_ALV),
            "1",
            "Arterial PaO2 only; PAO2 must be positive.",
            ALVEOLAR);

    public static final IndexDefinition ARTERIAL_ALVEOLAR_RATIO_FULL = new IndexDefinition(
            IndexCode.ARTERIAL_ALVEOLAR_RATIO,
            new FormulaRef("arterial-alveolar-ratio-full", "1"),
            "a/A = PaO2 / PAO2, PAO2 by the " + AlveolarGasForm.FULL.label(),
            List.of(PAO2, PAO2_ALV),
            "1",
            "Arterial PaO2 only; PAO2 must be positive.",
            ALVEOLAR);

    public static final IndexDefinition OXYGENATION_INDEX = new IndexDefinition(
            IndexCode.OXYGENATION_INDEX,
            new FormulaRef("oxygenation-index", "1"),
            "OI = FiO2 [fraction] × MAP [cmH2O] × 100 / PaO2 [mmHg]",
            List.of(FIO2, MEAN_AIRWAY, PAO2),
            "1",
            "MAP is mean airway pressure at the time of the gas. Arterial PaO2 only. Used by pediatric definitions,"
                    + " not adult ones.",
            OI_OSI);

    public static final IndexDefinition OXYGEN_SATURATION_INDEX = new IndexDefinition(
            IndexCode.OXYGEN_SATURATION_INDEX,
            new FormulaRef("oxygen-saturation-index", "1"),
            "OSI = FiO2 [fraction] × MAP [cmH2O] × 100 / SpO2 [%]",
            List.of(FIO2, MEAN_AIRWAY, SPO2),
            "1",
            "Only with SpO2 ≤ 97 %. MAP is mean airway pressure. Pulse-oximetry cautions apply.",
            OI_OSI);

    public static final IndexDefinition VENTILATORY_RATIO = new IndexDefinition(
            IndexCode.VENTILATORY_RATIO,
            new FormulaRef("ventilatory-ratio-sinha", "1"),
            "VR = (VE [mL/min] × PaCO2 [mmHg]) / (PBW [kg] × 100 [mL/kg/min] × 37.5 [mmHg])",
            List.of(VE, PACO2, PBW),
            "1",
            "About 1 in normal individuals; rises with dead space and with CO2 production (fever, feeding,"
                    + " shivering). Arterial PaCO2 only; PBW, not actual weight.",
            SINHA);

    public static final IndexDefinition DEAD_SPACE_FRACTION = new IndexDefinition(
            IndexCode.DEAD_SPACE_FRACTION,
            new FormulaRef("dead-space-fraction-enghoff", "1"),
            "VD/VT = (PaCO2 − PECO2) / PaCO2",
            List.of(PACO2, PECO2),
            "1",
            "Needs mixed-expired PCO2; end-tidal PCO2 gives a different quantity and is never used. Inflated by"
                    + " shunt and venous admixture as well as dead space. PECO2 above PaCO2 is refused.",
            ENGHOFF);

    public static final IndexDefinition PACO2_ETCO2_GRADIENT = new IndexDefinition(
            IndexCode.PACO2_ETCO2_GRADIENT,
            new FormulaRef("paco2-etco2-gradient", "1"),
            "ΔP(a–et)CO2 = PaCO2 − PetCO2",
            List.of(PACO2, ETCO2),
            "mm[Hg]",
            "End-tidal PCO2 captured at the blood-gas time; arterial PaCO2 only. Normally about 2–5 mmHg [CP].",
            GRADIENT_CO2);

    public static final IndexDefinition PREDICTED_BODY_WEIGHT = new IndexDefinition(
            IndexCode.PREDICTED_BODY_WEIGHT,
            new FormulaRef("predicted-body-weight-ardsnet-cm", "1"),
            "male: 50 + 0.91 × (height [cm] − 152.4); female: 45.5 + 0.91 × (height [cm] − 152.4)",
            List.of(HEIGHT, SEX),
            "kg",
            "ARDSNet cm form, never clamped (the inch form differs by up to about 0.2 kg). Derived for adults;"
                    + " heights below 140 cm and patients under 18 are noted as outside the validated range.",
            ARDSNET);

    public static final IndexDefinition TIDAL_VOLUME_PER_PBW = new IndexDefinition(
            IndexCode.TIDAL_VOLUME_PER_PBW,
            new FormulaRef("tidal-volume-per-pbw", "1"),
            "VT [mL] / PBW [kg]",
            List.of(VT, PBW),
            "mL/kg",
            "The notes say which tidal volume was used (measured expired, measured delivered, or set).",
            ARDSNET);

    public static final IndexDefinition DRIVING_PRESSURE = new IndexDefinition(
            IndexCode.DRIVING_PRESSURE,
            new FormulaRef("driving-pressure", "1"),
            "ΔP = Pplat − PEEP",
            List.of(PPLAT, PEEP),
            "cm[H2O]",
            "Valid only with a true plateau (inspiratory hold, passive patient). Plateau below PEEP is refused. Set"
                    + " PEEP does not include intrinsic PEEP.",
            AMATO);

    public static final IndexDefinition STATIC_COMPLIANCE = new IndexDefinition(
            IndexCode.STATIC_COMPLIANCE,
            new FormulaRef("static-compliance", "1"),
            "Crs = VT [mL] / (Pplat − PEEP)",
            List.of(VT, PPLAT, PEEP),
            "mL/cm[H2O]",
            "Same plateau conditions as driving pressure; not evaluable when Pplat − PEEP is 0. Dynamic compliance"
                    + " (VT / (Ppeak − PEEP)) is a different quantity.",
            COMPLIANCE);

    public static final IndexDefinition MECHANICAL_POWER_SURROGATE = new IndexDefinition(
            IndexCode.MECHANICAL_POWER,
            new FormulaRef("mechanical-power-surrogate-vc", "1"),
            "MP [J/min] = 0.098 × VT [L] × RR × (Ppeak − ½ × (Pplat − PEEP))",
            List.of(VT, RR, PPEAK, PPLAT, PEEP),
            "J/min",
            "Valid for volume-controlled ventilation with constant (square-wave) inspiratory flow, where it equals"
                    + " the full Gattinoni 2016 equation; the ventilation mode is not checked. Not for pressure"
                    + " control. Other published formulas give different numbers.",
            MECHANICAL_POWER);

    public static final IndexDefinition ARTERIAL_OXYGEN_CONTENT = new IndexDefinition(
            IndexCode.ARTERIAL_OXYGEN_CONTENT,
            new FormulaRef("arterial-oxygen-content", "1"),
            "CaO2 [mL/dL] = k × Hb [g/dL] × SaO2 [fraction] + 0.003 × PaO2 [mmHg]",
            List.of(K, HB, SAO2, PAO2),
            "mL/dL",
            "SaO2 from an arterial sample (co-oximetry preferred; SpO2 is not used). k is a site parameter (1.34,"
                    + " 1.36 and 1.39 give results up to about 4 % apart) and is shown in the notes.",
            OXYGEN_CONTENT);

    private static final List<IndexDefinition> ALL = List.of(
            PF_RATIO,
            PF_RATIO_ALTITUDE_ADJUSTED,
            SF_RATIO,
            ALVEOLAR_OXYGEN_SIMPLIFIED,
            ALVEOLAR_OXYGEN_FULL,
            AA_GRADIENT_SIMPLIFIED,
            AA_GRADIENT_FULL,
            ARTERIAL_ALVEOLAR_RATIO_SIMPLIFIED,
            ARTERIAL_ALVEOLAR_RATIO_FULL,
            OXYGENATION_INDEX,
            OXYGEN_SATURATION_INDEX,
            VENTILATORY_RATIO,
            DEAD_SPACE_FRACTION,
            PACO2_ETCO2_GRADIENT,
            PREDICTED_BODY_WEIGHT,
            TIDAL_VOLUME_PER_PBW,
            DRIVING_PRESSURE,
            STATIC_COMPLIANCE,
            MECHANICAL_POWER_SURROGATE,
            ARTERIAL_OXYGEN_CONTENT);

    private static final Map<String, IndexDefinition> BY_FORMULA_ID;
    private static final Map<IndexCode, IndexDefinition> DEFAULTS;

    static {
        Map<String, IndexDefinition> byId = new LinkedHashMap<>();
        Map<IndexCode, IndexDefinition> defaults = new EnumMap<>(IndexCode.class);
        for (IndexDefinition d : ALL) {
            if (byId.put(d.formula().id(), d) != null) {
                throw new IllegalStateException(
                        "duplicate formula id " + d.formula().id());
            }
            defaults.putIfAbsent(d.code(), d);
        }
        for (IndexCode code : IndexCode.values()) {
            if (!defaults.containsKey(code)) {
                throw new IllegalStateException("no formula defined for " + code);
            }
        }
        BY_FORMULA_ID = Collections.unmodifiableMap(byId);
        DEFAULTS = Collections.unmodifiableMap(defaults);
    }

    private IndexDefinitions() {}

    /** Every formula, in IndexCode order; the alveolar-gas indices appear once per form. */
    public static List<IndexDefinition> all() {
        return ALL;
    }

    /** The definition used for {@code code} under the default site parameters. */
    public static IndexDefinition of(IndexCode code) {
        return DEFAULTS.get(code);
    }

    /** The definition used for {@code code} under a site's parameters (the alveolar gas form is a site choice). */
    public static IndexDefinition of(IndexCode code, SiteParameters site) {
        boolean full = site.alveolarGasForm() == AlveolarGasForm.FULL;
        return switch (code) {
            case ALVEOLAR_OXYGEN -> full ? ALVEOLAR_OXYGEN_FULL : ALVEOLAR_OXYGEN_SIMPLIFIED;
            case AA_GRADIENT -> full ? AA_GRADIENT_FULL : AA_GRADIENT_SIMPLIFIED;
            case ARTERIAL_ALVEOLAR_RATIO -> full ? ARTERIAL_ALVEOLAR_RATIO_FULL : ARTERIAL_ALVEOLAR_RATIO_SIMPLIFIED;
            default -> DEFAULTS.get(code);
        };
    }

    /** One definition per code under a site's parameters, in IndexCode order. */
    public static List<IndexDefinition> forSite(SiteParameters site) {
        List<IndexDefinition> out = new ArrayList<>();
        for (IndexCode code : IndexCode.values()) {
            out.add(of(code, site));
        }
        return List.copyOf(out);
    }

    /** The definition with this formula id, in any version the registry knows. */
    public static Optional<IndexDefinition> byFormula(FormulaRef ref) {
        IndexDefinition d = BY_FORMULA_ID.get(ref.id());
        return d != null && d.formula().equals(ref) ? Optional.of(d) : Optional.empty();
    }
}
