package org.lungflag.service.replay;

import java.time.Instant;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.lungflag.rules.engine.Episode;

/** What the report draws for one patient: time series of oxygenation and ventilator values, and the episodes. */
record PatientChart(
        String patientId, Map<String, List<Point>> series, List<Episode> episodes, Instant from, Instant to) {

    record Point(Instant at, double value) {}

    /** Series names, in drawing order, with their units. */
    static final Map<String, String> SERIES = seriesNames();

    private static Map<String, String> seriesNames() {
        Map<String, String> m = new LinkedHashMap<>();
        m.put("P/F ratio", "mmHg");
        m.put("S/F ratio", "");
        m.put("Ventilatory ratio", "");
        m.put("PEEP", "cmH2O");
        m.put("FiO2", "fraction");
        return m;
    }

    /** At most {@code max} points, evenly thinned, keeping the first and the last. */
    static List<Point> thin(List<Point> points, int max) {
        if (points.size() <= max) {
            return points;
        }
        List<Point> out = new ArrayList<>(max);
        double step = (points.size() - 1) / (double) (max - 1);
        for (int i = 0; i < max; i++) {
            out.add(points.get((int) Math.round(i * step)));
        }
        return out;
    }
}
