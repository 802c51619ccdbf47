package org.lungflag.rules.index;

import org.lungflag.rules.patient.Sex;

/**
 * The index formulas as pure functions of numbers in the units their names say. No validity checks here beyond
 * the arithmetic: {@link IndexCalculator} decides whether the inputs qualify (specimen, look-back, SpO2 ≤ 97 %...)
 * and {@link IndexDefinitions} documents each formula with its source. Full precision, no rounding.
 */
public final class Formulas {

    /** Sea-level barometric pressure used by the Berlin altitude adjustment, mmHg. */
    public static final double SEA_LEVEL_PRESSURE_MMHG = 760.0;
    /** Predicted minute ventilation of the ventilatory ratio, mL/kg PBW/min (Sinha 2009). */
    public static final double VR_PREDICTED_MINUTE_VENTILATION_ML_PER_KG = 100.0;
    /** Ideal PaCO2 of the ventilatory ratio: 5 kPa written as 37.5 mmHg (Sinha 2009; Sinha 2019). */
    public static final double VR_IDEAL_PACO2_MMHG = 37.5;
    /** Converts L·cmH2O to joules in the mechanical power equations (98.0665 Pa × 1e-3 m³ ≈ 0.098 J). */
    public static final double MECHANICAL_POWER_FACTOR = 0.098;
    /** Dissolved oxygen, mL O2 per dL blood per mmHg (clinical-reference §7.1). */
    public static final double DISSOLVED_OXYGEN_ML_PER_DL_PER_MMHG = 0.003;
    /** PBW intercepts and slope, ARDSNet cm form. */
    public static final double PBW_MALE_INTERCEPT_KG = 50.0;

    public static final double PBW_FEMALE_INTERCEPT_KG = 45.5;
    public static final double PBW_SLOPE_KG_PER_CM = 0.91;
    public static final double PBW_REFERENCE_HEIGHT_CM = 152.4;

    private Formulas() {}

    /** P/F = PaO2 [mmHg] / FiO2 [fraction]. */
    public static double pfRatio(double pao2MmHg, double fio2) {
        return pao2MmHg / fio2;
    }

    /** Berlin altitude adjustment: P/F × (Pb / 760). */
    public static double altitudeAdjustedPfRatio(double pfRatio, double barometricPressureMmHg) {
        return pfRatio * (barometricPressureMmHg / SEA_LEVEL_PRESSURE_MMHG);
    }

    /** S/F = SpO2 [%] / FiO2 [fraction]. */
    public static double sfRatio(double spo2Percent, double fio2) {
        return spo2Percent / fio2;
    }

    /** PIO2 = FiO2 × (Pb − PH2O), mmHg. */
    public static double inspiredOxygen(double fio2, double barometricPressureMmHg, double waterVapourMmHg) {
        return fio2 * (barometricPressureMmHg - waterVapourMmHg);
    }

    /** Simplified alveolar gas equation: PAO2 = FiO2 × (Pb − PH2O) − PaCO2 / R, mmHg. */
    public static double alveolarOxygenSimplified(
            double fio2, double barometricPressureMmHg, double waterVapourMmHg, double paco2MmHg, double r) {
        return inspiredOxygen(fio2, barometricPressureMmHg, waterVapourMmHg) - paco2MmHg / r;
    }

    /** Full alveolar gas equation: PAO2 = FiO2 × (Pb − PH2O) − PaCO2 × [FiO2 + (1 − FiO2) / R], mmHg. */
    public static double alveolarOxygenFull(
            double fio2, double barometricPressureMmHg, double waterVapourMmHg, double paco2MmHg, double r) {
        return inspiredOxygen(fio2, barometricPressureMmHg, waterVapourMmHg) - paco2MmHg * (fio2 + (1 - fio2) / r);
    }

    /** PAO2 by the named form. */
    public static double alveolarOxygen(
            AlveolarGasForm form,
            double fio2,
            double barometricPressureMmHg,
            double waterVapourMmHg,
            double paco2MmHg,
            double r) {
        return form == AlveolarGasForm.FULL
                ? alveolarOxygenFull(fio2, barometricPressureMmHg, waterVapourMmHg, paco2MmHg, r)
                : alveolarOxygenSimplified(fio2, barometricPressureMmHg, waterVapourMmHg, paco2MmHg, r);
    }

    /** A–a gradient = PAO2 − PaO2, mmHg. */
    public static double aaGradient(double alveolarOxygenMmHg, double pao2MmHg) {
        return alveolarOxygenMmHg - pao2MmHg;
    }

    /** a/A ratio = PaO2 / PAO2. */
    public static double arterialAlveolarRatio(double pao2MmHg, double alveolarOxygenMmHg) {
        return pao2MmHg / alveolarOxygenMmHg;
    }

    /** OI = FiO2 [fraction] × mean airway pressure [cmH2O] × 100 / PaO2 [mmHg]. */
    public static double oxygenationIndex(double fio2, double meanAirwayPressureCmH2O, double pao2MmHg) {
        return fio2 * meanAirwayPressureCmH2O * 100.0 / pao2MmHg;
    }

    /** OSI = FiO2 [fraction] × mean airway pressure [cmH2O] × 100 / SpO2 [%]. */
    public static double oxygenSaturationIndex(double fio2, double meanAirwayPressureCmH2O, double spo2Percent) {
        return fio2 * meanAirwayPressureCmH2O * 100.0 / spo2Percent;
    }

    /** VR = (VE [mL/min] × PaCO2 [mmHg]) / (PBW [kg] × 100 mL/kg/min × 37.5 mmHg), Sinha 2009. */
    public static double ventilatoryRatio(double minuteVentilationMlPerMin, double paco2MmHg, double pbwKg) {
        return (minuteVentilationMlPerMin * paco2MmHg)
                / (pbwKg * VR_PREDICTED_MINUTE_VENTILATION_ML_PER_KG * VR_IDEAL_PACO2_MMHG);
    }

    /** Bohr–Enghoff dead-space fraction VD/VT = (PaCO2 − PECO2) / PaCO2, PECO2 mixed-expired (not end-tidal). */
    public static double deadSpaceFraction(double paco2MmHg, double mixedExpiredPco2MmHg) {
        return (paco2MmHg - mixedExpiredPco2MmHg) / paco2MmHg;
    }

    /** PaCO2 − PetCO2, mmHg. */
    public static double paco2Etco2Gradient(double paco2MmHg, double etco2MmHg) {
        return paco2MmHg - etco2MmHg;
    }

    /** ARDSNet PBW, cm form, not clamped: male 50 + 0.91 × (height − 152.4) kg. */
    public static double predictedBodyWeightMale(double heightCm) {
        return PBW_MALE_INTERCEPT_KG + PBW_SLOPE_KG_PER_CM * (heightCm - PBW_REFERENCE_HEIGHT_CM);
    }

    /** ARDSNet PBW, cm form, not clamped: female 45.5 + 0.91 × (height − 152.4) kg. */
    public static double predictedBodyWeightFemale(double heightCm) {
        return PBW_FEMALE_INTERCEPT_KG + PBW_SLOPE_KG_PER_CM * (heightCm - PBW_REFERENCE_HEIGHT_CM);
    }

    /** ARDSNet PBW (cm form) for a known sex; throws for {@link Sex#UNKNOWN}, which has no formula. */
    public static double predictedBodyWeight(Sex sex, double heightCm) {
        return switch (sex) {
            case MALE -> predictedBodyWeightMale(heightCm);
            case FEMALE -> predictedBodyWeightFemale(heightCm);
            case UNKNOWN -> throw new IllegalArgumentException("predicted body weight needs a known sex");
        };
    }

    /** VT per kg PBW, mL/kg. */
    public static double tidalVolumePerKg(double tidalVolumeMl, double pbwKg) {
        return tidalVolumeMl / pbwKg;
    }

    /** ΔP = Pplat − PEEP, cmH2O. */
    public static double drivingPressure(double plateauCmH2O, double peepCmH2O) {
        return plateauCmH2O - peepCmH2O;
    }

    /** Crs = VT [mL] / (Pplat − PEEP), mL/cmH2O. */
    public static double staticCompliance(double tidalVolumeMl, double plateauCmH2O, double peepCmH2O) {
        return tidalVolumeMl / (plateauCmH2O - peepCmH2O);
    }

    /** Ers = (Pplat − PEEP) / VT [L], cmH2O/L. */
    public static double staticElastance(double tidalVolumeLitres, double plateauCmH2O, double peepCmH2O) {
        return (plateauCmH2O - peepCmH2O) / tidalVolumeLitres;
    }

    /**
     * Mechanical power, surrogate for volume-controlled ventilation with constant (square-wave) flow and no
     * end-inspiratory pause: MP [J/min] = 0.098 × VT [L] × RR × (Ppeak − ½ × (Pplat − PEEP)). Under those
     * conditions it equals {@link #mechanicalPowerGattinoni} algebraically.
     */
    public static double mechanicalPowerSurrogate(
            double tidalVolumeLitres, double rate, double peakCmH2O, double plateauCmH2O, double peepCmH2O) {
        return MECHANICAL_POWER_FACTOR * tidalVolumeLitres * rate * (peakCmH2O - 0.5 * (plateauCmH2O - peepCmH2O));
    }

    /**
     * Mechanical power, the full equation of Gattinoni et al. 2016: MP [J/min] = 0.098 × RR × {VT² × [½ × ELrs +
     * RR × (1 + I:E) / (60 × I:E) × Raw] + VT × PEEP}, VT in litres, ELrs in cmH2O/L, Raw in cmH2O/(L/s), I:E as a
     * number (1:2 → 0.5).
     */
    public static double mechanicalPowerGattinoni(
            double tidalVolumeLitres,
            double rate,
            double elastanceCmH2OPerL,
            double resistanceCmH2OPerLPerS,
            double ieRatio,
            double peepCmH2O) {
        double vt = tidalVolumeLitres;
        double resistive = rate * (1 + ieRatio) / (60 * ieRatio) * resistanceCmH2OPerLPerS;
        return MECHANICAL_POWER_FACTOR * rate * (vt * vt * (0.5 * elastanceCmH2OPerL + resistive) + vt * peepCmH2O);
    }

    /** CaO2 [mL/dL] = k × Hb [g/dL] × SaO2 [fraction] + 0.003 × PaO2 [mmHg]. */
    public static double arterialOxygenContent(double k, double hemoglobinGPerDl, double sao2, double pao2MmHg) {
        return k * hemoglobinGPerDl * sao2 + DISSOLVED_OXYGEN_ML_PER_DL_PER_MMHG * pao2MmHg;
    }
}
