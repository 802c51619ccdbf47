package org.lungflag.sandbox.scenario;

import java.io.BufferedReader;
import java.io.IOException;
import java.io.StringReader;
import java.io.UncheckedIOException;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;

/**
 * What the rule engine should make of the demo scenario, derived from the design of each course in {@link
 * DemoPatients} (not from running the engine); written next to the data as {@code expected-advisories.csv} and
 * checked against the real engine by the service's {@code DemoScenarioOfflineTest} and end-to-end test.
 *
 * <p>Columns: {@code check,patient,rule,code,hour,tolerance_hours,status,note}. Hours count from the scenario
 * start. Checks:
 *
 * <ul>
 *   <li>{@code onset}: the rule's advisory for the patient first reports tier {@code code} at about {@code hour};
 *   <li>{@code final}: at the end the rule's Flag has tier {@code code} and status {@code status} ({@code active},
 *       or {@code inactive} with the episode ended at about {@code hour});
 *   <li>{@code not-evaluable}: an evaluation of the rule at about {@code hour} is not evaluable with data-quality
 *       reason {@code code};
 *   <li>{@code repair}: a value charted at about {@code hour} was accepted with the unit repair {@code code};
 *   <li>{@code not-evaluated}: the rule is never evaluated for the patient (the other age group's rule).
 * </ul>
 *
 * Every Flag the engine raises must be listed by an {@code onset} row: no other advisory is expected.
 */
public final class ExpectedAdvisories {

    public static final String FILE = "expected-advisories.csv";

    static final String HEADER = "check,patient,rule,code,hour,tolerance_hours,status,note";

    /** One row of the file. */
    public record Expectation(
            String check,
            String patient,
            String rule,
            String code,
            double hour,
            double toleranceHours,
            String status,
            String note) {

        public boolean isOnset() {
            return "onset".equals(check);
        }

        public boolean isFinal() {
            return "final".equals(check);
        }

        public boolean isNotEvaluable() {
            return "not-evaluable".equals(check);
        }

        public boolean isRepair() {
            return "repair".equals(check);
        }

        public boolean isNotEvaluated() {
            return "not-evaluated".equals(check);
        }

        /** Whether {@code actualHour} lies within the tolerance of {@link #hour}. */
        public boolean near(double actualHour) {
            return Math.abs(actualHour - hour) <= toleranceHours;
        }

        String line() {
            return String.join(
                    ",",
                    check,
                    patient,
                    rule,
                    code,
                    format(hour),
                    format(toleranceHours),
                    status,
                    note.replace(',', ';'));
        }

        private static String format(double value) {
            return value == Math.rint(value) ? Long.toString((long) value) : String.format(Locale.ROOT, "%.1f", value);
        }
    }

    private ExpectedAdvisories() {}

    /** The expectations of the committed design, in file order. */
    static List<Expectation> design() {
        List<Expectation> e = new ArrayList<>();
        // demo-01: progressive hypoxemia, prone criteria, proned at hour 26 and improving
        e.add(onset("demo-01", "hypoxemia", "hypoxemia-mild", 0.3, 1, "P/F about 235 at the first gas"));
        e.add(onset("demo-01", "hypoxemia", "hypoxemia-moderate", 8, 4, "P/F falls below 200"));
        e.add(onset("demo-01", "hypoxemia", "hypoxemia-severe", 20, 4, "P/F about 90 on FiO2 0.8"));
        e.add(onset(
                "demo-01",
                "prone-criteria-met",
                "prone-criteria-met",
                24.3,
                2,
                "P/F below 150 on FiO2 at least 0.6 at every gas from hour 12: sustained 12 h"));
        e.add(fin(
                "demo-01",
                "prone-criteria-met",
                "prone-criteria-met",
                "inactive",
                31,
                5,
                "proned at hour 26: P/F above 150 again; resolves 6 h after the criteria were last met"));
        e.add(fin("demo-01", "hypoxemia", "hypoxemia-mild", "active", 72, 0, "still in the mild band at the end"));
        // demo-02: rising dead space, stable oxygenation
        e.add(onset(
                "demo-02",
                "dead-space-rising",
                "dead-space-rising",
                30.3,
                6,
                "ventilatory ratio reaches 1.5 with a rise of 0.3 within 24 h"));
        e.add(fin("demo-02", "dead-space-rising", "dead-space-rising", "active", 72, 0, "still rising at the end"));
        // demo-03: improving; resolves
        e.add(onset("demo-03", "hypoxemia", "hypoxemia-moderate", 0.3, 1, "P/F about 160 on admission"));
        e.add(onset("demo-03", "hypoxemia", "hypoxemia-mild", 12.3, 4, "P/F above 200 while FiO2 is weaned"));
        e.add(fin(
                "demo-03",
                "hypoxemia",
                "hypoxemia-mild",
                "inactive",
                26.5,
                4,
                "P/F above 300 from hour 22: resolves 6 h after the last gas in a band"));
        // demo-04: tidal volume too large for a short woman
        e.add(onset(
                "demo-04",
                "tidal-volume-high",
                "tidal-volume-high",
                2.1,
                2,
                "450 mL is about 10 mL/kg PBW: the second reading 2 h after the first"));
        e.add(fin(
                "demo-04",
                "tidal-volume-high",
                "tidal-volume-high",
                "inactive",
                34,
                3,
                "VT reduced to 330 mL at hour 30: resolves 6 h after the last high reading"));
        // demo-05: driving pressure, plateau, moderate hypoxemia
        e.add(onset("demo-05", "hypoxemia", "hypoxemia-moderate", 0.3, 1, "P/F about 165"));
        e.add(onset("demo-05", "hypoxemia", "hypoxemia-mild", 50, 8, "P/F above 200 in the third day"));
        e.add(fin("demo-05", "hypoxemia", "hypoxemia-mild", "active", 72, 0, "mild band at the end"));
        e.add(onset(
                "demo-05",
                "driving-pressure-high",
                "driving-pressure-high",
                0.1,
                1,
                "plateau about 27 at PEEP 10: driving pressure about 17 at the first plateau"));
        e.add(fin(
                "demo-05",
                "driving-pressure-high",
                "driving-pressure-high",
                "inactive",
                50,
                4,
                "compliance improves at hour 46: resolves 6 h after the last high value"));
        e.add(onset(
                "demo-05",
                "plateau-pressure-high",
                "plateau-pressure-high",
                20.1,
                1,
                "PEEP 12 at hour 20: plateau about 32"));
        e.add(fin(
                "demo-05",
                "plateau-pressure-high",
                "plateau-pressure-high",
                "inactive",
                34,
                3,
                "VT reduced at hour 30: resolves 6 h after the last plateau above 30"));
        // demo-06: a child on pediatric bands
        e.add(onset(
                "demo-06",
                "pediatric-hypoxemia",
                "pediatric-hypoxemia-mild-moderate",
                0.3,
                1,
                "oxygenation index about 7"));
        e.add(onset(
                "demo-06",
                "pediatric-hypoxemia",
                "pediatric-hypoxemia-severe",
                16.3,
                4,
                "oxygenation index at least 16"));
        e.add(fin(
                "demo-06",
                "pediatric-hypoxemia",
                "pediatric-hypoxemia-mild-moderate",
                "active",
                72,
                0,
                "oxygenation index below 16 again from about hour 38"));
        e.add(notEvaluated("demo-06", "hypoxemia", "a child: the adult Berlin bands are not evaluated"));
        e.add(notEvaluated("demo-06", "tidal-volume-high", "a child: the adult ARDSNet rule is not evaluated"));
        // demo-07: venous gas, FiO2 0.4 charted in %
        e.add(onset("demo-07", "hypoxemia", "hypoxemia-moderate", 0.3, 1, "P/F about 175"));
        e.add(onset("demo-07", "hypoxemia", "hypoxemia-mild", 24.3, 6, "P/F above 200 from the second day"));
        e.add(fin("demo-07", "hypoxemia", "hypoxemia-mild", "active", 72, 0, "mild band at the end"));
        e.add(notEvaluable(
                "demo-07",
                "hypoxemia",
                "specimen-venous",
                20.5,
                0.5,
                "PO2 about 36 mmHg from a venous Specimen is not used for P/F"));
        e.add(notEvaluable(
                "demo-07",
                "dead-space-rising",
                "specimen-venous",
                20.5,
                0.5,
                "the venous PCO2 is not used for the ventilatory ratio"));
        e.add(new Expectation(
                "repair",
                "demo-07",
                "",
                "fio2-fraction-charted-as-percent",
                36.1,
                0.5,
                "",
                "FiO2 0.4 charted with unit %: read as the fraction 0.40"));
        // demo-08: no height; a gas with no ventilator settings in the 60 min before it
        e.add(onset("demo-08", "hypoxemia", "hypoxemia-mild", 0.3, 1, "P/F about 250"));
        e.add(fin("demo-08", "hypoxemia", "hypoxemia-mild", "active", 72, 0, "mild band at the end"));
        e.add(notEvaluable(
                "demo-08",
                "hypoxemia",
                "missing-fio2",
                30.7,
                0.5,
                "ventilator check at hour 30 missed: no FiO2 within 60 min before the gas"));
        e.add(notEvaluable(
                "demo-08",
                "tidal-volume-high",
                "missing-height",
                0.1,
                1,
                "no height on record: no predicted body weight"));
        e.add(notEvaluable(
                "demo-08",
                "dead-space-rising",
                "missing-height",
                0.3,
                1,
                "no height on record: the ventilatory ratio needs predicted body weight"));
        return e;
    }

    private static Expectation onset(String patient, String rule, String code, double hour, double tol, String note) {
        return new Expectation("onset", patient, rule, code, hour, tol, "", note);
    }

    private static Expectation fin(
            String patient, String rule, String code, String status, double hour, double tol, String note) {
        return new Expectation("final", patient, rule, code, hour, tol, status, note);
    }

    private static Expectation notEvaluable(
            String patient, String rule, String reason, double hour, double tol, String note) {
        return new Expectation("not-evaluable", patient, rule, reason, hour, tol, "", note);
    }

    private static Expectation notEvaluated(String patient, String rule, String note) {
        return new Expectation("not-evaluated", patient, rule, "", 0, 72, "", note);
    }

    static String csv() {
        StringBuilder sb = new StringBuilder(HEADER).append('\n');
        design().forEach(e -> sb.append(e.line()).append('\n'));
        return sb.toString();
    }

    /** Parses the file's text. */
    public static List<Expectation> parse(String text) {
        List<Expectation> out = new ArrayList<>();
        try (BufferedReader reader = new BufferedReader(new StringReader(text))) {
            String header = reader.readLine();
            if (!HEADER.equals(header)) {
                throw new IllegalArgumentException(
                        FILE + ": the first line must be '" + HEADER + "', was '" + header + "'");
            }
            String line;
            int number = 1;
            while ((line = reader.readLine()) != null) {
                number++;
                if (line.isBlank()) {
                    continue;
                }
                String[] f = line.split(",", -1);
                if (f.length != 8) {
                    throw new IllegalArgumentException(
                            FILE + " line " + number + ": expected 8 fields, found " + f.length);
                }
                try {
                    out.add(new Expectation(
                            f[0], f[1], f[2], f[3], Double.parseDouble(f[4]), Double.parseDouble(f[5]), f[6], f[7]));
                } catch (NumberFormatException ex) {
                    throw new IllegalArgumentException(
                            FILE + " line " + number + ": hour and tolerance must be numbers", ex);
                }
            }
        } catch (IOException e) {
            throw new UncheckedIOException(e);
        }
        return out;
    }
}
