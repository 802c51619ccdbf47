package org.lungflag.sandbox.scenario;

import java.time.LocalDate;
import java.util.ArrayList;
import java.util.List;
import java.util.Objects;
import java.util.TreeMap;

/**
 * One invented patient's 72 h course: who they are, the ventilator settings in force hour by hour, the physiology
 * the blood gases are drawn from, and how the unit charts them. {@link ScenarioGenerator} turns a course into FHIR
 * resources with seeded noise; {@link DemoPatients} defines the eight courses of the demo.
 */
final class Course {

    /** FHIR administrative gender codes. */
    enum Sex {
        MALE("male"),
        FEMALE("female");

        final String code;

        Sex(String code) {
            this.code = code;
        }
    }

    /** How the lab reports gas tensions. */
    enum PressureUnit {
        MMHG,
        KPA
    }

    final String id;
    final String given;
    final String family;
    final Sex sex;
    final LocalDate birthDate;
    final int bed;
    final String story;

    Double heightCm;
    double weightKg;

    Curve fio2 = Curve.constant(0.4);
    Curve peep = Curve.constant(8);
    Curve vtSet = Curve.constant(450);
    Curve rrSet = Curve.constant(18);
    /** Respiratory-system compliance in mL/cmH2O: plateau = PEEP + VT / compliance. */
    Curve compliance = Curve.constant(40);
    /** Target oxygenation index for a child (PaO2 = FiO2 x MAP x 100 / OI); when set it replaces {@link #pf}. */
    Curve oi;
    /** Target P/F in mmHg; PaO2 = P/F x FiO2 with noise. */
    Curve pf = Curve.constant(350);

    Curve paco2 = Curve.constant(40);
    Curve bicarbonate = Curve.constant(25);
    /** Mean airway pressure in cmH2O; when absent it follows from PEEP and plateau. */
    Curve meanAirwayPressure;

    /** Hours (from the scenario start) at which an arterial blood gas is drawn, about 15-25 min past the hour. */
    List<Double> gasHours = new ArrayList<>();

    /** FiO2 charted as a fraction (unit "1") or in percent ("%"). */
    boolean fio2InPercent;
    /** Ventilator values come through a device gateway that sends IEEE 11073 MDC codes beside LOINC. */
    boolean deviceGateway;
    /** Some device values carry only their MDC code (no LOINC). */
    boolean mdcOnly;

    PressureUnit labUnit = PressureUnit.MMHG;

    /** Body-position changes: hour -> code of the body-position CodeSystem (prone, supine, other). */
    final TreeMap<Double, String> positions = new TreeMap<>();
    /** Ventilator checks the nurse did not chart (even hours). */
    final List<Integer> missedVentilatorChecks = new ArrayList<>();
    /** Hour of a gas drawn from a vein and sent as an unspecified-blood gas with a venous Specimen. */
    Double venousGasHour;
    /** Hour of a ventilator check where FiO2 0.40 was charted with the unit "%". */
    Integer fio2FractionAsPercentHour;
    /** Hour of an extra gas drawn away from any ventilator check (no settings in the 60 min before it). */
    Double gasWithoutSettingsHour;

    private Course(String id, String given, String family, Sex sex, LocalDate birthDate, int bed, String story) {
        this.id = id;
        this.given = given;
        this.family = family;
        this.sex = sex;
        this.birthDate = birthDate;
        this.bed = bed;
        this.story = story;
    }

    static Course of(String id, String given, String family, Sex sex, String birthDate, int bed, String story) {
        return new Course(
                Objects.requireNonNull(id),
                given,
                family,
                sex,
                LocalDate.parse(birthDate),
                bed,
                Objects.requireNonNull(story));
    }

    Course height(Double cm) {
        heightCm = cm;
        return this;
    }

    Course weight(double kg) {
        weightKg = kg;
        return this;
    }

    Course gasesEvery(int hours, int from, int to) {
        for (int h = from; h <= to; h += hours) {
            gasHours.add((double) h);
        }
        gasHours.sort(Double::compare);
        return this;
    }

    Course extraGas(double hour) {
        gasHours.add(hour);
        gasHours.sort(Double::compare);
        return this;
    }
}
