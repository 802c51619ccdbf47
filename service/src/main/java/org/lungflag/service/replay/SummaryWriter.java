package org.lungflag.service.replay;

import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.SerializationFeature;
import java.io.IOException;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.lungflag.rules.catalog.RuleDefinition;

/**
 * summary.json: what was read, what was refused and why, and per rule what it did; the sweep, if any. It holds no
 * wall-clock time, so two replays of the same data give the same file (the test of shuffled and split input
 * compares it byte for byte).
 */
final class SummaryWriter {

    /** Our own definition of the denominator (no standard one is implied). */
    static final String PATIENT_DAYS_DEFINITION = "Lungflag's own definition, not a standard one: for each patient,"
            + " the clinical time from their first to their last accepted observation (body height and weight"
            + " excluded), summed over patients, in days. A patient with a single observation time counts 0.";

    static final String CAUTION = "Retrospective estimate on charted data: it shows what the rules would have"
            + " flagged on this export, not what happened to patients. Charted data may be wrong, late or"
            + " missing. Advisory only: it does not diagnose, and it is no substitute for local protocols and the"
            + " treating clinician's judgment.";

    private final Replay replay;

    SummaryWriter(Replay replay) {
        this.replay = replay;
    }

    Map<String, Object> tree() {
        Map<String, Object> root = new LinkedHashMap<>();
        root.put("caution", CAUTION);
        Map<String, Object> input = new LinkedHashMap<>();
        List<String> files = new ArrayList<>();
        replay.inputs().forEach(i -> files.add(i.name()));
        input.put("files", files);
        input.put("lines", replay.lines);
        input.put("blankLines", replay.blankLines);
        input.put("resourcesByType", replay.byType);
        input.put("observations", replay.observations);
        input.put("rejectedLines", replay.rejectedLines);
        input.put("partlyRefusedLines", replay.partlyRefusedLines);
        input.put("refusalsByReason", replay.rejectedByReason);
        input.put("clinicalStart", str(replay.exportStart()));
        input.put("clinicalEnd", str(replay.exportEnd()));
        root.put("input", input);

        Map<String, Object> patients = new LinkedHashMap<>();
        patients.put("evaluated", replay.patientsEvaluated);
        patients.put("withoutPatientResource", replay.patientsWithoutPatientResource);
        patients.put("withoutUsableData", replay.patientsWithoutData);
        patients.put("patientDays", round(replay.patientDays));
        patients.put("patientDaysDefinition", PATIENT_DAYS_DEFINITION);
        root.put("patients", patients);

        Map<String, Object> outputs = new LinkedHashMap<>();
        outputs.put("advisories", replay.flagsWritten);
        outputs.put("indices", replay.indicesWritten);
        outputs.put("evaluations", replay.evaluationRows);
        root.put("outputs", outputs);

        Map<String, Object> catalog = new LinkedHashMap<>();
        catalog.put("origin", replay.catalog().origin());
        List<Object> ruleList = new ArrayList<>();
        for (RuleDefinition r : replay.catalog().rules()) {
            Map<String, Object> rule = new LinkedHashMap<>();
            rule.put("id", r.id());
            rule.put("version", r.version());
            rule.put("digest", r.digest());
            Map<String, Object> params = new LinkedHashMap<>();
            replay.overrides().effective(r).forEach((k, v) -> params.put(k, String.valueOf(v)));
            rule.put("parameters", params);
            ruleList.add(rule);
        }
        catalog.put("rules", ruleList);
        Map<String, Object> overrides = new LinkedHashMap<>();
        replay.overrides().asMap().forEach((k, v) -> overrides.put(k, String.valueOf(v)));
        catalog.put("overrides", overrides);
        root.put("catalog", catalog);

        Map<String, Object> rules = new LinkedHashMap<>();
        for (RuleTally t : replay.tallies.values()) {
            rules.put(t.ruleId, tally(t, replay.patientDays));
        }
        root.put("rules", rules);

        Map<String, Object> indices = new LinkedHashMap<>();
        for (IndexDistribution d : replay.distributions.values()) {
            List<Double> sorted = d.sortedSample();
            Map<String, Object> m = new LinkedHashMap<>();
            m.put("unit", d.unit);
            m.put("count", d.count);
            m.put("min", round(d.min));
            m.put("p10", round(IndexDistribution.quantile(sorted, 0.1)));
            m.put("median", round(IndexDistribution.quantile(sorted, 0.5)));
            m.put("p90", round(IndexDistribution.quantile(sorted, 0.9)));
            m.put("max", round(d.max));
            m.put("mean", round(d.sum / d.count));
            indices.put(d.code, m);
        }
        root.put("indices", indices);

        if (replay.sweepKey() != null) {
            Map<String, Object> sweep = new LinkedHashMap<>();
            sweep.put("parameter", replay.sweepKey());
            List<Object> rows = new ArrayList<>();
            for (int i = 0; i < replay.sweepValues().size(); i++) {
                Map<String, Object> row = new LinkedHashMap<>();
                row.put("value", replay.sweepValues().get(i));
                RuleTally t = replay.variantTallies.get(i).values().iterator().next();
                row.putAll(tally(t, replay.patientDays));
                rows.add(row);
            }
            sweep.put("runs", rows);
            root.put("sweep", sweep);
        }
        return root;
    }

    static Map<String, Object> tally(RuleTally t, double patientDays) {
        Map<String, Object> m = new LinkedHashMap<>();
        m.put("firings", t.onsets);
        m.put("patients", t.patients);
        m.put("firingsPer100PatientDays", roundOrNull(RuleTally.per100PatientDays(t.onsets, patientDays)));
        m.put("evaluations", t.evaluations);
        m.put("evaluationsMeetingATier", t.tierMet);
        m.put("resolved", t.resolved);
        m.put("expired", t.expired);
        m.put("activeAtEnd", t.stillActive);
        Map<String, Object> hours = new LinkedHashMap<>();
        t.secondsInTier.forEach((k, v) -> hours.put(k, round(v / 3600.0)));
        m.put("hoursInTier", hours);
        Long median = t.medianOnsetToResolutionSeconds();
        m.put("medianHoursOnsetToResolution", median == null ? null : round(median / 3600.0));
        m.put("outcomes", t.outcomes);
        m.put("notEvaluableReasons", t.notEvaluable);
        return m;
    }

    void write(Path file) throws IOException {
        new ObjectMapper().enable(SerializationFeature.INDENT_OUTPUT).writeValue(file.toFile(), tree());
    }

    private static String str(Object o) {
        return o == null ? null : o.toString();
    }

    static Double round(double v) {
        if (!Double.isFinite(v)) {
            return null;
        }
        return Math.round(v * 1000.0) / 1000.0;
    }

    static Double roundOrNull(Double v) {
        return v == null ? null : round(v);
    }
}
