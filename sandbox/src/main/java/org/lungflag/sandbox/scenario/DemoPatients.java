package org.lungflag.sandbox.scenario;

import static org.lungflag.sandbox.scenario.Curve.constant;
import static org.lungflag.sandbox.scenario.Curve.linear;
import static org.lungflag.sandbox.scenario.Curve.steps;

import java.util.List;
import org.lungflag.sandbox.scenario.Course.PressureUnit;
import org.lungflag.sandbox.scenario.Course.Sex;

/**
 * The eight invented patients of the demo ICU at the imaginary Saltmarsh General Hospital, each with a course that
 * exercises a different part of the rule catalog. Names, identifiers, dates and values are made up.
 *
 * <p>Predicted body weight (ARDSNet, clinical-reference §6.1): male 50 + 0.91 x (height cm - 152.4), female 45.5 +
 * 0.91 x (height cm - 152.4). The comments give the design values the blood gases are drawn around; the seeded
 * noise moves each reading a few percent, and {@code expected-advisories.csv} says what the engine should make of
 * it (checked by the service's {@code DemoScenarioOfflineTest} and the end-to-end test).
 */
final class DemoPatients {

    private DemoPatients() {}

    static List<Course> all() {
        return List.of(
                proned(),
                deadSpace(),
                improving(),
                largeTidalVolume(),
                drivingPressure(),
                child(),
                venousGasAndPercentFio2(),
                noHeightAndGasWithoutSettings());
    }

    /**
     * Progressive hypoxemia: P/F 235 (mild band) falling to about 90 (severe) by hour 20 on FiO2 0.8-0.9 and PEEP
     * 14; P/F below 150 with FiO2 at least 0.6 from hour 12, so the PROSEVA criteria hold for 12 h by hour 24;
     * proned at hour 26 for a 16 h session, P/F back above 150 and improving to about 260 by hour 72.
     */
    static Course proned() {
        Course c = Course.of(
                        "demo-01",
                        "Marten",
                        "Oakhollow",
                        Sex.MALE,
                        "1967-05-21",
                        1,
                        "progressive hypoxemia to the severe band; prone criteria met; proned at hour 26 and improving")
                .height(180.0) // PBW 75.1 kg
                .weight(91)
                .gasesEvery(4, 0, 68);
        c.fio2 = steps(
                0, 0.45, 6, 0.55, 10, 0.6, 14, 0.7, 18, 0.8, 22, 0.9, 30, 0.8, 34, 0.7, 40, 0.6, 46, 0.5, 56, 0.45, 64,
                0.4);
        c.peep = steps(0, 8, 6, 10, 10, 12, 14, 14, 40, 12, 52, 10);
        c.vtSet = constant(450); // 6.0 mL/kg PBW
        c.rrSet = constant(24);
        c.compliance = linear(0, 42, 20, 36, 40, 38, 72, 42);
        c.pf = linear(0, 235, 6, 200, 12, 140, 16, 115, 20, 90, 26, 86, 28, 162, 32, 185, 42, 205, 48, 215, 72, 262);
        c.paco2 = linear(0, 42, 24, 46, 72, 43);
        c.positions.put(-1.0, "supine");
        c.positions.put(26.0, "prone");
        c.positions.put(42.0, "supine");
        c.deviceGateway = true;
        return c;
    }

    /**
     * A steadily rising dead space with stable oxygenation (as after a pulmonary embolism): P/F about 360, minute
     * ventilation and PaCO2 rising together, so the ventilatory ratio (Sinha 2009) climbs from about 1.1 to 2.6; it
     * first reaches 1.5 with a 0.3 rise within 24 h at about hour 30. Gases in kPa.
     */
    static Course deadSpace() {
        Course c = Course.of(
                        "demo-02",
                        "Tobin",
                        "Saltreed",
                        Sex.MALE,
                        "1961-09-03",
                        2,
                        "dead space rising steadily with stable oxygenation")
                .height(175.0) // PBW 70.6 kg
                .weight(82)
                .gasesEvery(6, 0, 66);
        c.fio2 = constant(0.35);
        c.peep = constant(8);
        c.vtSet = constant(460);
        c.rrSet = steps(0, 16, 12, 18, 20, 20, 28, 22, 36, 24, 44, 26, 54, 28, 64, 30);
        c.compliance = constant(45);
        c.pf = linear(0, 362, 72, 352);
        c.paco2 = linear(0, 39, 12, 40, 72, 52);
        c.bicarbonate = linear(0, 25, 72, 28);
        c.labUnit = PressureUnit.KPA;
        return c;
    }

    /** Moderate band on admission (P/F 160), improving on weaning FiO2: mild from hour 12, above 300 from hour 22. */
    static Course improving() {
        Course c = Course.of(
                        "demo-03",
                        "Ilse",
                        "Brackenmoor",
                        Sex.FEMALE,
                        "1978-02-14",
                        3,
                        "improving; the hypoxemia advisory resolves")
                .height(165.0) // PBW 57.0 kg
                .weight(70)
                .gasesEvery(4, 0, 24)
                .gasesEvery(6, 30, 66);
        c.fio2 = steps(0, 0.6, 8, 0.5, 14, 0.4, 20, 0.35, 26, 0.3);
        c.peep = steps(0, 10, 14, 8, 26, 6);
        c.vtSet = constant(360);
        c.rrSet = constant(20);
        c.compliance = constant(35);
        c.pf = linear(0, 160, 8, 185, 12, 215, 18, 270, 22, 310, 26, 345, 72, 380);
        c.paco2 = constant(41);
        c.fio2InPercent = true;
        return c;
    }

    /**
     * A short woman (152 cm, PBW 45.1 kg) ventilated with 450 mL, about 10 mL/kg PBW (the volume was set for her
     * actual weight of 62 kg); reduced to 330 mL (7.3 mL/kg) at hour 30. Oxygenation fine. Gases in kPa.
     */
    static Course largeTidalVolume() {
        Course c = Course.of(
                        "demo-04",
                        "Wren",
                        "Pellowby",
                        Sex.FEMALE,
                        "1954-11-30",
                        4,
                        "short woman ventilated with too large a tidal volume for her predicted body weight")
                .height(152.0) // PBW 45.1 kg
                .weight(62)
                .gasesEvery(6, 0, 66);
        c.fio2 = constant(0.3);
        c.peep = constant(8);
        c.vtSet = steps(0, 450, 30, 330);
        c.rrSet = steps(0, 14, 30, 19); // the same minute ventilation after the change
        c.compliance = constant(40);
        c.pf = linear(0, 350, 72, 365);
        c.paco2 = constant(38);
        c.labUnit = PressureUnit.KPA;
        return c;
    }

    /**
     * Stiff lungs: VT 400 mL (6.1 mL/kg PBW) at compliance 24 mL/cmH2O gives a driving pressure about 17 cmH2O;
     * PEEP raised to 12 at hour 20 with compliance falling to 20 takes the plateau to about 32 (above 30) until
     * hour 30, when VT is reduced to 340; driving pressure stays about 16 until compliance improves at hour 46.
     * Moderate hypoxemia band throughout the first two days. FiO2 charted in percent; MDC-only plateau values.
     */
    static Course drivingPressure() {
        Course c = Course.of(
                        "demo-05",
                        "Cassius",
                        "Drumlin",
                        Sex.MALE,
                        "1970-07-08",
                        5,
                        "high driving pressure; plateau above 30 cmH2O for a while")
                .height(170.0) // PBW 66.0 kg
                .weight(95)
                .gasesEvery(4, 0, 68);
        c.fio2 = steps(0, 0.5, 36, 0.45, 56, 0.4);
        c.peep = steps(0, 10, 20, 12, 30, 10);
        c.vtSet = steps(0, 400, 30, 340);
        c.rrSet = steps(0, 26, 30, 30);
        c.compliance = steps(0, 24, 20, 20, 30, 21, 46, 26, 50, 28);
        c.pf = linear(0, 165, 36, 180, 48, 200, 72, 235);
        c.paco2 = linear(0, 50, 72, 47);
        c.fio2InPercent = true;
        c.deviceGateway = true;
        c.mdcOnly = true;
        return c;
    }

    /**
     * A six-year-old on invasive ventilation, evaluated on the PALICC-2 bands only: oxygenation index about 7
     * (mild/moderate) rising to about 20 (severe, at least 16) from hour 16, falling below 16 again by about hour 38.
     */
    static Course child() {
        Course c = Course.of(
                        "demo-06",
                        "Poppy",
                        "Marram",
                        Sex.FEMALE,
                        "2019-08-19",
                        6,
                        "a child: pediatric bands (oxygenation index)")
                .height(116.0)
                .weight(21)
                .gasesEvery(4, 0, 68);
        c.fio2 = steps(0, 0.45, 12, 0.55, 16, 0.65, 24, 0.7, 36, 0.6, 42, 0.5, 52, 0.4, 62, 0.35);
        c.peep = steps(0, 6, 14, 8, 40, 7, 54, 6);
        c.vtSet = constant(130);
        c.rrSet = constant(28);
        c.compliance = constant(10);
        c.meanAirwayPressure = linear(0, 12, 14, 15, 18, 18, 34, 18, 40, 14, 54, 11, 72, 10);
        c.oi = linear(0, 7, 10, 9, 16, 17.5, 22, 20, 34, 19, 40, 12, 54, 6.5, 72, 5);
        c.paco2 = linear(0, 44, 20, 50, 72, 42);
        c.deviceGateway = true;
        return c;
    }

    /**
     * Data quality: a gas drawn from a vein at hour 20 (sent as "PO2 in blood" with a venous Specimen), and at hour
     * 36 FiO2 0.40 charted with the unit "%". Otherwise moderate then mild band.
     */
    static Course venousGasAndPercentFio2() {
        Course c = Course.of(
                        "demo-07",
                        "Edmund",
                        "Shingleton",
                        Sex.MALE,
                        "1956-03-27",
                        7,
                        "data quality: a venous gas, and FiO2 0.4 charted with unit %")
                .height(178.0) // PBW 73.3 kg
                .weight(88)
                .gasesEvery(4, 0, 68);
        c.fio2 = steps(0, 0.5, 24, 0.45, 36, 0.4);
        c.peep = steps(0, 10, 36, 8);
        c.vtSet = constant(440);
        c.rrSet = constant(20);
        c.compliance = constant(40);
        c.pf = linear(0, 175, 18, 185, 24, 215, 72, 260);
        c.paco2 = constant(43);
        c.venousGasHour = 20.5;
        c.fio2FractionAsPercentHour = 36;
        return c;
    }

    /**
     * Data quality: no height ever charted (predicted body weight cannot be computed), and at hour 30 the ventilator
     * check was missed, so the gas drawn at 30:40 has no FiO2 or PEEP in the 60 min before it. Mild band.
     */
    static Course noHeightAndGasWithoutSettings() {
        Course c = Course.of(
                        "demo-08",
                        "Nell",
                        "Foxhollow",
                        Sex.FEMALE,
                        "1973-12-01",
                        8,
                        "data quality: no height on record, and a blood gas with no ventilator settings in the look-back")
                .height(null)
                .weight(68)
                .gasesEvery(4, 0, 28)
                .extraGas(30 + 40 / 60.0)
                .gasesEvery(4, 34, 70);
        c.fio2 = constant(0.45);
        c.peep = constant(8);
        c.vtSet = constant(420);
        c.rrSet = constant(18);
        c.compliance = constant(38);
        c.pf = linear(0, 250, 72, 272);
        c.paco2 = constant(40);
        c.missedVentilatorChecks.add(30);
        return c;
    }
}
