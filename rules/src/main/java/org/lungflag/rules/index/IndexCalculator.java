package org.lungflag.rules.index;

import static org.lungflag.rules.quality.DataQualityReason.MISSING_FIO2;
import static org.lungflag.rules.quality.DataQualityReason.NO_VENTILATOR_SETTINGS;
import static org.lungflag.rules.quality.DataQualityReason.OUT_OF_FORMULA_RANGE;
import static org.lungflag.rules.quality.DataQualityReason.SPECIMEN_UNSPECIFIED;
import static org.lungflag.rules.quality.DataQualityReason.SPECIMEN_VENOUS;

import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Objects;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.NumberText;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.ValueRole;
import org.lungflag.rules.pairing.MissingInput;
import org.lungflag.rules.pairing.PairedInputs;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.patient.Sex;
import org.lungflag.rules.quality.DataQualityReason;

/**
 * Computes every index in {@link IndexCode} at one anchor from the values in force there. Never a number when an
 * input does not qualify: the result is then {@link NotEvaluable} with a {@link DataQualityReason} and a plain
 * detail naming the input (and its resource id), never patient data.
 *
 * <p>Stateless apart from a cache of per-site note texts; thread-safe. The engine calls it at every evaluation
 * point, so the happy path avoids streams and needless allocation.
 */
public final class IndexCalculator {

    private static final IndexCode[] CODES = IndexCode.values();

    static final String NOTE_VT_EXPIRED = "tidal volume: measured expired tidal volume used";
    static final String NOTE_VT_DELIVERED = "tidal volume: measured delivered tidal volume used (no expired value)";
    static final String NOTE_VT_SET = "tidal volume: set tidal volume used (no measured value)";
    static final String NOTE_RR_SET = "respiratory rate: set rate used (no measured total rate)";
    static final String NOTE_VE_DERIVED =
            "minute ventilation derived from measured tidal volume × measured respiratory rate";
    static final String NOTE_PEEP_SET = "PEEP: set PEEP used; intrinsic PEEP not included";
    static final String NOTE_PB_ASSUMED = "Pb 760 mmHg assumed (sea level): none charted and no site value configured";
    static final String NOTE_PBW_SHORT = "height below 140 cm: outside the range the PBW formula was derived for";
    static final String NOTE_PBW_MINOR = "patient under 18: the PBW formula was derived for adults";
    static final String NOTE_PBW_NO_CLAMP = "PBW not clamped below 152.4 cm (ARDSNet cm form)";
    static final String NOTE_MP_VALIDITY =
            "surrogate valid for volume control with constant inspiratory flow; the ventilation mode was not checked";
    static final String NOTE_PLATEAU = "valid only with a true plateau (inspiratory hold, passive patient)";
    static final String NOTE_OXIMETRY =
            "pulse oximetry may over-read with dark skin pigmentation, poor perfusion" + " or dyshemoglobins";
    static final String NOTE_AA_NEGATIVE = "PaO2 above the computed PAO2 (negative gradient): check FiO2 and Pb";

    private volatile SiteText siteText;

    /** Text and formula choices that depend only on the site parameters, built once per parameter set. */
    private record SiteText(
            SiteParameters site,
            IndexDefinition alveolar,
            IndexDefinition gradient,
            IndexDefinition ratio,
            String alveolarNote,
            String pbSiteNote,
            String altitudeNote,
            String hufnerNote) {

        static SiteText of(SiteParameters site) {
            String alveolarNote = site.alveolarGasForm().label() + " with PH2O "
                    + number(site.waterVapourPressureMmHg()) + " mmHg and R " + number(site.respiratoryQuotient())
                    + " (assumed)";
            String pbSite = site.hasBarometricPressure()
                    ? "Pb " + number(site.barometricPressureMmHg()) + " mmHg (site value)"
                    : null;
            String altitude = site.hasBarometricPressure()
                    ? "adjusted with the site's Pb " + number(site.barometricPressureMmHg()) + " mmHg (P/F × Pb/760)"
                    : null;
            return new SiteText(
                    site,
                    IndexDefinitions.of(IndexCode.ALVEOLAR_OXYGEN, site),
                    IndexDefinitions.of(IndexCode.AA_GRADIENT, site),
                    IndexDefinitions.of(IndexCode.ARTERIAL_ALVEOLAR_RATIO, site),
                    alveolarNote,
                    pbSite,
                    altitude,
                    "Hüfner constant k = " + number(site.hufnerConstant()) + " mL O2/g Hb (site parameter)");
        }
    }

    public IndexCalculator() {}

    /** Every index at the anchor of {@code inputs}. */
    public IndexSet compute(PairedInputs inputs, PatientFacts patient, SiteParameters site) {
        Objects.requireNonNull(inputs, "inputs");
        Objects.requireNonNull(patient, "patient");
        Objects.requireNonNull(site, "site");
        SiteText text = siteText(site);
        IndexResult[] r = new IndexResult[CODES.length];

        Measurement pao2 = inputs.latestOrNull(QuantityKind.PAO2);
        Measurement paco2 = inputs.latestOrNull(QuantityKind.PACO2);
        Measurement fio2 = inputs.latestOrNull(QuantityKind.FIO2);
        Measurement peep = inputs.latestOrNull(QuantityKind.PEEP);
        Measurement spo2 = inputs.latestOrNull(QuantityKind.SPO2);
        Measurement meanAirway = inputs.latestOrNull(QuantityKind.MEAN_AIRWAY_PRESSURE);
        Measurement plateau = inputs.latestOrNull(QuantityKind.PLATEAU_PRESSURE);
        Measurement peak = inputs.latestOrNull(QuantityKind.PEAK_PRESSURE);
        Measurement height = inputs.latestOrNull(QuantityKind.BODY_HEIGHT);

        // --- oxygenation ----------------------------------------------------------------------------------------
        IndexDefinition def = IndexDefinitions.PF_RATIO;
        NotEvaluable refusal = arterial(def, pao2, QuantityKind.PAO2, DataQualityReason.MISSING_PAO2, inputs);
        if (refusal == null) {
            refusal = fio2Refusal(def, fio2, peep, inputs);
        }
        IndexResult pf = refusal != null
                ? refusal
                : result(
                        def.code(),
                        Formulas.pfRatio(pao2.value(), fio2.value()),
                        def.formula(),
                        List.of(pao2, fio2),
                        List.of());
        r[IndexCode.PF_RATIO.ordinal()] = pf;

        def = IndexDefinitions.PF_RATIO_ALTITUDE_ADJUSTED;
        if (!site.hasBarometricPressure()) {
            r[def.code().ordinal()] = new NotEvaluable(
                    def.code(),
                    def.formula(),
                    DataQualityReason.SITE_PRESSURE_NOT_CONFIGURED,
                    "no site barometric pressure is configured, so P/F is not adjusted for altitude");
        } else if (pf instanceof IndexValue v) {
            r[def.code().ordinal()] = result(
                    def.code(),
                    Formulas.altitudeAdjustedPfRatio(v.value(), site.barometricPressureMmHg()),
                    def.formula(),
                    v.inputs(),
                    List.of(text.altitudeNote()));
        } else {
            r[def.code().ordinal()] = propagate(def, (NotEvaluable) pf);
        }

        def = IndexDefinitions.SF_RATIO;
        refusal = spo2Refusal(def, spo2, inputs);
        if (refusal == null) {
            refusal = fio2Refusal(def, fio2, peep, inputs);
        }
        r[def.code().ordinal()] = refusal != null
                ? refusal
                : result(
                        def.code(),
                        Formulas.sfRatio(spo2.value() * 100.0, fio2.value()),
                        def.formula(),
                        List.of(spo2, fio2),
                        List.of(NOTE_OXIMETRY));

        alveolar(r, text, inputs, pao2, paco2, fio2, peep);

        def = IndexDefinitions.OXYGENATION_INDEX;
        refusal = arterial(def, pao2, QuantityKind.PAO2, DataQualityReason.MISSING_PAO2, inputs);
        if (refusal == null) {
            refusal = ventilatorRefusal(def, fio2, peep, meanAirway, inputs);
        }
        r[def.code().ordinal()] = refusal != null
                ? refusal
                : result(
                        def.code(),
                        Formulas.oxygenationIndex(fio2.value(), meanAirway.value(), pao2.value()),
                        def.formula(),
                        List.of(fio2, meanAirway, pao2),
                        List.of());

        def = IndexDefinitions.OXYGEN_SATURATION_INDEX;
        refusal = spo2Refusal(def, spo2, inputs);
        if (refusal == null) {
            refusal = ventilatorRefusal(def, fio2, peep, meanAirway, inputs);
        }
        r[def.code().ordinal()] = refusal != null
                ? refusal
                : result(
                        def.code(),
                        Formulas.oxygenSaturationIndex(fio2.value(), meanAirway.value(), spo2.value() * 100.0),
                        def.formula(),
                        List.of(fio2, meanAirway, spo2),
                        List.of(NOTE_OXIMETRY));

        // --- body weight and volumes ----------------------------------------------------------------------------
        IndexResult pbw = predictedBodyWeight(inputs, patient, height);
        r[IndexCode.PREDICTED_BODY_WEIGHT.ordinal()] = pbw;

        Measurement vt = inputs.measuredOrNull(QuantityKind.TIDAL_VOLUME_EXPIRED);
        String vtNote = NOTE_VT_EXPIRED;
        if (vt == null) {
            vt = inputs.measuredOrNull(QuantityKind.TIDAL_VOLUME);
            vtNote = NOTE_VT_DELIVERED;
        }
        Measurement measuredVt = vt;
        if (vt == null) {
            vt = inputs.settingOrNull(QuantityKind.TIDAL_VOLUME);
            vtNote = NOTE_VT_SET;
        }

        def = IndexDefinitions.TIDAL_VOLUME_PER_PBW;
        if (vt == null) {
            r[def.code().ordinal()] = missingTidalVolume(def, inputs);
        } else if (pbw instanceof IndexValue w) {
            r[def.code().ordinal()] = result(
                    def.code(),
                    Formulas.tidalVolumePerKg(vt.value(), w.value()),
                    def.formula(),
                    List.of(vt, height),
                    List.of(vtNote));
        } else {
            r[def.code().ordinal()] = propagate(def, (NotEvaluable) pbw);
        }

        // --- ventilation and dead space -------------------------------------------------------------------------
        ventilation(r, inputs, paco2, pbw, height, measuredVt);

        // --- mechanics --------------------------------------------------------------------------------------------
        mechanics(r, inputs, plateau, peep, peak, vt, vtNote);

        // --- oxygen content ---------------------------------------------------------------------------------------
        def = IndexDefinitions.ARTERIAL_OXYGEN_CONTENT;
        Measurement sao2 = inputs.latestOrNull(QuantityKind.SAO2);
        Measurement hb = inputs.latestOrNull(QuantityKind.HEMOGLOBIN);
        refusal = arterial(def, sao2, QuantityKind.SAO2, DataQualityReason.MISSING_SAO2, inputs);
        if (refusal == null && hb == null) {
            refusal = missing(def, QuantityKind.HEMOGLOBIN, DataQualityReason.MISSING_HEMOGLOBIN, inputs);
        }
        if (refusal == null) {
            refusal = arterial(def, pao2, QuantityKind.PAO2, DataQualityReason.MISSING_PAO2, inputs);
        }
        r[def.code().ordinal()] = refusal != null
                ? refusal
                : result(
                        def.code(),
                        Formulas.arterialOxygenContent(site.hufnerConstant(), hb.value(), sao2.value(), pao2.value()),
                        def.formula(),
                        List.of(hb, sao2, pao2),
                        List.of(text.hufnerNote()));

        return new IndexSet(inputs.anchor(), r);
    }

    private static void alveolar(
            IndexResult[] r,
            SiteText text,
            PairedInputs inputs,
            Measurement pao2,
            Measurement paco2,
            Measurement fio2,
            Measurement peep) {
        SiteParameters site = text.site();
        IndexDefinition def = text.alveolar();
        NotEvaluable refusal = arterial(def, paco2, QuantityKind.PACO2, DataQualityReason.MISSING_PACO2, inputs);
        if (refusal == null) {
            refusal = fio2Refusal(def, fio2, peep, inputs);
        }
        if (refusal != null) {
            r[IndexCode.ALVEOLAR_OXYGEN.ordinal()] = refusal;
            r[IndexCode.AA_GRADIENT.ordinal()] = propagate(text.gradient(), refusal);
            r[IndexCode.ARTERIAL_ALVEOLAR_RATIO.ordinal()] = propagate(text.ratio(), refusal);
            return;
        }
        Measurement chartedPb = inputs.latestOrNull(QuantityKind.BAROMETRIC_PRESSURE);
        double pb;
        String pbNote;
        if (chartedPb != null) {
            pb = chartedPb.value();
            pbNote = "Pb " + number(pb) + " mmHg (charted)";
        } else if (site.hasBarometricPressure()) {
            pb = site.barometricPressureMmHg();
            pbNote = text.pbSiteNote();
        } else {
            pb = Formulas.SEA_LEVEL_PRESSURE_MMHG;
            pbNote = NOTE_PB_ASSUMED;
        }
        double alveolarO2 = Formulas.alveolarOxygen(
                site.alveolarGasForm(),
                fio2.value(),
                pb,
                site.waterVapourPressureMmHg(),
                paco2.value(),
                site.respiratoryQuotient());
        List<Measurement> used = chartedPb == null ? List.of(fio2, paco2) : List.of(fio2, paco2, chartedPb);
        List<String> notes = List.of(text.alveolarNote(), pbNote);
        if (!(alveolarO2 > 0)) {
            NotEvaluable nonPositive = new NotEvaluable(
                    def.code(),
                    def.formula(),
                    OUT_OF_FORMULA_RANGE,
                    "computed PAO2 is " + number(alveolarO2) + " mmHg (not positive) at FiO2 " + number(fio2.value())
                            + " and PaCO2 " + number(paco2.value()) + " mmHg");
            r[IndexCode.ALVEOLAR_OXYGEN.ordinal()] = nonPositive;
            r[IndexCode.AA_GRADIENT.ordinal()] = propagate(text.gradient(), nonPositive);
            r[IndexCode.ARTERIAL_ALVEOLAR_RATIO.ordinal()] = propagate(text.ratio(), nonPositive);
            return;
        }
        r[IndexCode.ALVEOLAR_OXYGEN.ordinal()] = result(def.code(), alveolarO2, def.formula(), used, notes);

        IndexDefinition gradient = text.gradient();
        IndexDefinition ratio = text.ratio();
        NotEvaluable pao2Refusal = arterial(gradient, pao2, QuantityKind.PAO2, DataQualityReason.MISSING_PAO2, inputs);
        if (pao2Refusal != null) {
            r[IndexCode.AA_GRADIENT.ordinal()] = pao2Refusal;
            r[IndexCode.ARTERIAL_ALVEOLAR_RATIO.ordinal()] =
                    new NotEvaluable(ratio.code(), ratio.formula(), pao2Refusal.reason(), pao2Refusal.detail());
            return;
        }
        List<Measurement> usedWithPao2 =
                chartedPb == null ? List.of(fio2, paco2, pao2) : List.of(fio2, paco2, chartedPb, pao2);
        double aa = Formulas.aaGradient(alveolarO2, pao2.value());
        r[IndexCode.AA_GRADIENT.ordinal()] = result(
                gradient.code(),
                aa,
                gradient.formula(),
                usedWithPao2,
                aa < 0 ? List.of(text.alveolarNote(), pbNote, NOTE_AA_NEGATIVE) : notes);
        r[IndexCode.ARTERIAL_ALVEOLAR_RATIO.ordinal()] = result(
                ratio.code(),
                Formulas.arterialAlveolarRatio(pao2.value(), alveolarO2),
                ratio.formula(),
                usedWithPao2,
                notes);
    }

    private static IndexResult predictedBodyWeight(PairedInputs inputs, PatientFacts patient, Measurement height) {
        IndexDefinition def = IndexDefinitions.PREDICTED_BODY_WEIGHT;
        if (height == null) {
            return missing(def, QuantityKind.BODY_HEIGHT, DataQualityReason.MISSING_HEIGHT, inputs);
        }
        double cm = height.value();
        if (patient.sex() == Sex.UNKNOWN) {
            return new NotEvaluable(
                    def.code(),
                    def.formula(),
                    DataQualityReason.MISSING_SEX,
                    "sex unknown; at height " + number(cm) + " cm PBW would be "
                            + number(Formulas.predictedBodyWeightFemale(cm)) + " kg (female) to "
                            + number(Formulas.predictedBodyWeightMale(cm)) + " kg (male)");
        }
        double kg = Formulas.predictedBodyWeight(patient.sex(), cm);
        if (!(kg > 0)) {
            return new NotEvaluable(
                    def.code(),
                    def.formula(),
                    OUT_OF_FORMULA_RANGE,
                    "height " + number(cm) + " cm gives a PBW of " + number(kg) + " kg (not positive)");
        }
        boolean shortStature = cm < 140;
        boolean belowReference = cm < Formulas.PBW_REFERENCE_HEIGHT_CM;
        boolean minor = patient.birthDate() != null
                && patient.ageInYearsAt(inputs.anchor()).orElse(18) < 18;
        List<String> notes = List.of();
        if (shortStature || belowReference || minor) {
            List<String> n = new ArrayList<>(3);
            if (belowReference) {
                n.add(NOTE_PBW_NO_CLAMP);
            }
            if (shortStature) {
                n.add(NOTE_PBW_SHORT);
            }
            if (minor) {
                n.add(NOTE_PBW_MINOR);
            }
            notes = List.copyOf(n);
        }
        return result(def.code(), kg, def.formula(), List.of(height), notes);
    }

    private static void ventilation(
            IndexResult[] r,
            PairedInputs inputs,
            Measurement paco2,
            IndexResult pbw,
            Measurement height,
            Measurement measuredVt) {
        // ventilatory ratio
        IndexDefinition def = IndexDefinitions.VENTILATORY_RATIO;
        NotEvaluable refusal = arterial(def, paco2, QuantityKind.PACO2, DataQualityReason.MISSING_PACO2, inputs);
        Measurement ve = inputs.measuredOrNull(QuantityKind.MINUTE_VENTILATION);
        Measurement rate = inputs.measuredOrNull(QuantityKind.RESPIRATORY_RATE);
        if (refusal == null && ve == null && (measuredVt == null || rate == null)) {
            refusal = new NotEvaluable(
                    def.code(),
                    def.formula(),
                    DataQualityReason.MISSING_MINUTE_VENTILATION,
                    "no measured minute ventilation"
                            + (measuredVt == null ? ", no measured tidal volume" : "")
                            + (rate == null ? ", no measured respiratory rate" : "")
                            + " in force at the anchor");
        }
        if (refusal == null && pbw instanceof NotEvaluable n) {
            refusal = propagate(def, n);
        }
        if (refusal != null) {
            r[def.code().ordinal()] = refusal;
        } else {
            double veMlPerMin;
            List<Measurement> used;
            List<String> notes;
            if (ve != null) {
                veMlPerMin = ve.value() * 1000.0; // L/min → mL/min (SI prefix)
                used = List.of(ve, paco2, height);
                notes = List.of();
            } else {
                veMlPerMin = measuredVt.value() * rate.value();
                used = List.of(measuredVt, rate, paco2, height);
                notes = List.of(NOTE_VE_DERIVED);
            }
            r[def.code().ordinal()] = result(
                    def.code(),
                    Formulas.ventilatoryRatio(veMlPerMin, paco2.value(), ((IndexValue) pbw).value()),
                    def.formula(),
                    used,
                    notes);
        }

        // dead-space fraction (Bohr–Enghoff): mixed-expired PCO2 only, never EtCO2
        def = IndexDefinitions.DEAD_SPACE_FRACTION;
        Measurement peco2 = inputs.latestOrNull(QuantityKind.MIXED_EXPIRED_PCO2);
        refusal = arterial(def, paco2, QuantityKind.PACO2, DataQualityReason.MISSING_PACO2, inputs);
        if (refusal == null && peco2 == null) {
            refusal =
                    missing(def, QuantityKind.MIXED_EXPIRED_PCO2, DataQualityReason.MISSING_MIXED_EXPIRED_PCO2, inputs);
        }
        if (refusal == null && peco2.value() > paco2.value()) {
            refusal = new NotEvaluable(
                    def.code(),
                    def.formula(),
                    OUT_OF_FORMULA_RANGE,
                    "mixed-expired PCO2 " + number(peco2.value()) + " mmHg is above PaCO2 " + number(paco2.value())
                            + " mmHg (" + peco2.source() + ")");
        }
        r[def.code().ordinal()] = refusal != null
                ? refusal
                : result(
                        def.code(),
                        Formulas.deadSpaceFraction(paco2.value(), peco2.value()),
                        def.formula(),
                        List.of(paco2, peco2),
                        List.of());

        def = IndexDefinitions.PACO2_ETCO2_GRADIENT;
        Measurement etco2 = inputs.latestOrNull(QuantityKind.ETCO2);
        refusal = arterial(def, paco2, QuantityKind.PACO2, DataQualityReason.MISSING_PACO2, inputs);
        if (refusal == null && etco2 == null) {
            refusal = missing(def, QuantityKind.ETCO2, DataQualityReason.MISSING_ETCO2, inputs);
        }
        r[def.code().ordinal()] = refusal != null
                ? refusal
                : result(
                        def.code(),
                        Formulas.paco2Etco2Gradient(paco2.value(), etco2.value()),
                        def.formula(),
                        List.of(paco2, etco2),
                        List.of());
    }

    private static void mechanics(
            IndexResult[] r,
            PairedInputs inputs,
            Measurement plateau,
            Measurement peep,
            Measurement peak,
            Measurement vt,
            String vtNote) {
        IndexDefinition def = IndexDefinitions.DRIVING_PRESSURE;
        NotEvaluable refusal = plateauRefusal(def, plateau, peep, inputs);
        List<String> pressureNotes = peep != null && peep.role() == ValueRole.SETTING
                ? List.of(NOTE_PLATEAU, NOTE_PEEP_SET)
                : List.of(NOTE_PLATEAU);
        r[def.code().ordinal()] = refusal != null
                ? refusal
                : result(
                        def.code(),
                        Formulas.drivingPressure(plateau.value(), peep.value()),
                        def.formula(),
                        List.of(plateau, peep),
                        pressureNotes);

        def = IndexDefinitions.STATIC_COMPLIANCE;
        refusal = plateauRefusal(def, plateau, peep, inputs);
        if (refusal == null && vt == null) {
            refusal = missingTidalVolume(def, inputs);
        }
        if (refusal == null && plateau.value() == peep.value()) {
            refusal = new NotEvaluable(
                    def.code(),
                    def.formula(),
                    OUT_OF_FORMULA_RANGE,
                    "plateau pressure equals PEEP (" + number(peep.value())
                            + " cmH2O): driving pressure 0, compliance VT/ΔP undefined");
        }
        r[def.code().ordinal()] = refusal != null
                ? refusal
                : result(
                        def.code(),
                        Formulas.staticCompliance(vt.value(), plateau.value(), peep.value()),
                        def.formula(),
                        List.of(vt, plateau, peep),
                        peep.role() == ValueRole.SETTING
                                ? List.of(vtNote, NOTE_PLATEAU, NOTE_PEEP_SET)
                                : List.of(vtNote, NOTE_PLATEAU));

        def = IndexDefinitions.MECHANICAL_POWER_SURROGATE;
        refusal = plateauRefusal(def, plateau, peep, inputs);
        if (refusal == null && vt == null) {
            refusal = missingTidalVolume(def, inputs);
        }
        Measurement rate = inputs.measuredOrNull(QuantityKind.RESPIRATORY_RATE);
        boolean setRate = false;
        if (rate == null) {
            rate = inputs.settingOrNull(QuantityKind.RESPIRATORY_RATE);
            setRate = true;
        }
        if (refusal == null && rate == null) {
            refusal = missing(def, QuantityKind.RESPIRATORY_RATE, DataQualityReason.MISSING_RESPIRATORY_RATE, inputs);
        }
        if (refusal == null && peak == null) {
            refusal = missing(def, QuantityKind.PEAK_PRESSURE, DataQualityReason.MISSING_PEAK_PRESSURE, inputs);
        }
        if (refusal == null && peak.value() < plateau.value()) {
            refusal = new NotEvaluable(
                    def.code(),
                    def.formula(),
                    DataQualityReason.PEAK_BELOW_PLATEAU,
                    "peak pressure " + number(peak.value()) + " cmH2O is below plateau pressure "
                            + number(plateau.value()) + " cmH2O (" + peak.source() + ", " + plateau.source() + ")");
        }
        r[def.code().ordinal()] = refusal != null
                ? refusal
                : result(
                        def.code(),
                        Formulas.mechanicalPowerSurrogate(
                                vt.value() / 1000.0, // mL → L (SI prefix)
                                rate.value(),
                                peak.value(),
                                plateau.value(),
                                peep.value()),
                        def.formula(),
                        List.of(vt, rate, peak, plateau, peep),
                        setRate ? List.of(NOTE_MP_VALIDITY, vtNote, NOTE_RR_SET) : List.of(NOTE_MP_VALIDITY, vtNote));
    }

    private static NotEvaluable plateauRefusal(
            IndexDefinition def, Measurement plateau, Measurement peep, PairedInputs inputs) {
        if (plateau == null) {
            return missing(def, QuantityKind.PLATEAU_PRESSURE, DataQualityReason.MISSING_PLATEAU_PRESSURE, inputs);
        }
        if (peep == null) {
            return missing(def, QuantityKind.PEEP, DataQualityReason.MISSING_PEEP, inputs);
        }
        if (plateau.value() < peep.value()) {
            return new NotEvaluable(
                    def.code(),
                    def.formula(),
                    DataQualityReason.PLATEAU_BELOW_PEEP,
                    "plateau pressure " + number(plateau.value()) + " cmH2O is below PEEP " + number(peep.value())
                            + " cmH2O (" + plateau.source() + ", " + peep.source() + ")");
        }
        return null;
    }

    /** Null when {@code m} is an arterial sample; otherwise why not. */
    private static NotEvaluable arterial(
            IndexDefinition def, Measurement m, QuantityKind kind, DataQualityReason ifMissing, PairedInputs inputs) {
        if (m == null) {
            return missing(def, kind, ifMissing, inputs);
        }
        SpecimenKind specimen = m.specimen();
        if (specimen == SpecimenKind.ARTERIAL) {
            return null;
        }
        if (specimen == SpecimenKind.VENOUS
                || specimen == SpecimenKind.CAPILLARY
                || specimen == SpecimenKind.MIXED_VENOUS) {
            return new NotEvaluable(
                    def.code(),
                    def.formula(),
                    SPECIMEN_VENOUS,
                    kind.label() + " is from a "
                            + specimen.name().toLowerCase(Locale.ROOT).replace('_', '-') + " sample (" + m.source()
                            + "); an arterial sample is required");
        }
        return new NotEvaluable(
                def.code(),
                def.formula(),
                SPECIMEN_UNSPECIFIED,
                kind.label() + " does not state an arterial specimen (" + m.source() + ")");
    }

    private static NotEvaluable fio2Refusal(
            IndexDefinition def, Measurement fio2, Measurement peep, PairedInputs inputs) {
        if (fio2 != null) {
            return null;
        }
        if (peep == null) {
            return new NotEvaluable(
                    def.code(),
                    def.formula(),
                    NO_VENTILATOR_SETTINGS,
                    "neither FiO2 nor PEEP in force at the anchor (" + describe(inputs, QuantityKind.FIO2) + ")");
        }
        return missing(def, QuantityKind.FIO2, MISSING_FIO2, inputs);
    }

    /**
     * A value, or "out of formula range" when the arithmetic gives no finite number (inputs that bypassed the
     * normalizer's plausibility gates, e.g. an FiO2 of 0): the calculator never throws on data.
     */
    private static IndexResult result(
            IndexCode code, double value, FormulaRef formula, List<Measurement> used, List<String> notes) {
        if (!Double.isFinite(value)) {
            return new NotEvaluable(
                    code,
                    formula,
                    OUT_OF_FORMULA_RANGE,
                    code.display() + " gives no finite number from these inputs (" + describeInputs(used) + ")");
        }
        return new IndexValue(code, value, formula, used, notes);
    }

    private static String describeInputs(List<Measurement> used) {
        StringBuilder sb = new StringBuilder();
        for (Measurement m : used) {
            if (m == null) {
                continue;
            }
            if (sb.length() > 0) {
                sb.append(", ");
            }
            sb.append(m.kind().label())
                    .append(' ')
                    .append(number(m.value()))
                    .append(' ')
                    .append(m.unit());
        }
        return sb.toString();
    }

    /** FiO2 and mean airway pressure, as OI and OSI need them; null when both are in force. */
    private static NotEvaluable ventilatorRefusal(
            IndexDefinition def, Measurement fio2, Measurement peep, Measurement meanAirway, PairedInputs inputs) {
        NotEvaluable refusal = fio2Refusal(def, fio2, peep, inputs);
        if (refusal == null && meanAirway == null) {
            refusal = missing(
                    def, QuantityKind.MEAN_AIRWAY_PRESSURE, DataQualityReason.MISSING_MEAN_AIRWAY_PRESSURE, inputs);
        }
        return refusal;
    }

    private static NotEvaluable spo2Refusal(IndexDefinition def, Measurement spo2, PairedInputs inputs) {
        if (spo2 == null) {
            return missing(def, QuantityKind.SPO2, DataQualityReason.MISSING_SPO2, inputs);
        }
        if (spo2.value() > 0.97) {
            return new NotEvaluable(
                    def.code(),
                    def.formula(),
                    DataQualityReason.SPO2_ABOVE_97,
                    "SpO2 " + number(spo2.value() * 100.0) + " % is above 97 % (" + spo2.source() + ")");
        }
        return null;
    }

    private static NotEvaluable missingTidalVolume(IndexDefinition def, PairedInputs inputs) {
        return new NotEvaluable(
                def.code(),
                def.formula(),
                DataQualityReason.MISSING_TIDAL_VOLUME,
                "no measured (expired or delivered) or set tidal volume in force at the anchor");
    }

    private static NotEvaluable missing(
            IndexDefinition def, QuantityKind kind, DataQualityReason reason, PairedInputs inputs) {
        return new NotEvaluable(def.code(), def.formula(), reason, describe(inputs, kind));
    }

    private static String describe(PairedInputs inputs, QuantityKind kind) {
        MissingInput m = inputs.missingOrNull(kind);
        return m != null ? m.describe() : kind.label() + " not in force at the anchor";
    }

    private static NotEvaluable propagate(IndexDefinition def, NotEvaluable upstream) {
        return new NotEvaluable(
                def.code(),
                def.formula(),
                upstream.reason(),
                upstream.code().display() + " not evaluable: " + upstream.detail());
    }

    private SiteText siteText(SiteParameters site) {
        SiteText t = siteText;
        if (t == null || !t.site().equals(site)) {
            t = SiteText.of(site);
            siteText = t;
        }
        return t;
    }

    /** A number for notes and details (see {@link NumberText}). */
    static String number(double v) {
        return NumberText.of(v);
    }
}
