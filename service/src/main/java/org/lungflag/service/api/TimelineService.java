package org.lungflag.service.api;

import com.fasterxml.jackson.databind.JsonNode;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.LinkedHashSet;
import java.util.List;
import java.util.Map;
import java.util.Set;
import org.lungflag.rules.index.IndexCode;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.service.api.ApiRecords.EvaluationDetail;
import org.lungflag.service.api.ApiRecords.PatientTimeline;
import org.lungflag.service.api.ApiRecords.TimelineEvaluation;
import org.lungflag.service.api.ApiRecords.TimelinePoint;
import org.lungflag.service.api.ApiRecords.TimelineSeries;
import org.springframework.stereotype.Component;

/**
 * A patient's timeline for the console's charts: the oxygenation indices (P/F, S/F), ventilatory ratio and driving
 * pressure as the evaluations computed them (from their explanations: the same values the rules saw), PEEP and
 * FiO2 as charted (normalized, canonical units; FiO2 shown in percent), the episodes to shade and the evaluations.
 */
@Component
public class TimelineService {

    static final List<IndexCode> INDICES =
            List.of(IndexCode.PF_RATIO, IndexCode.SF_RATIO, IndexCode.VENTILATORY_RATIO, IndexCode.DRIVING_PRESSURE);

    private final AuditQueries queries;

    TimelineService(AuditQueries queries) {
        this.queries = queries;
    }

    public PatientTimeline timeline(String patient, Duration span) {
        String ref = "Patient/" + AuditQueries.patientId(patient);
        Instant latest = queries.latestClinicalTime(patient).orElse(Instant.now());
        Instant from = latest.minus(span);
        List<EvaluationDetail> evaluations = queries.currentEvaluationsOf(patient, from);
        Map<IndexCode, Map<Instant, TimelinePoint>> indexPoints = new LinkedHashMap<>();
        for (IndexCode code : INDICES) {
            indexPoints.put(code, new LinkedHashMap<>());
        }
        List<TimelineEvaluation> points = new ArrayList<>();
        for (EvaluationDetail d : evaluations) {
            var e = d.evaluation();
            points.add(new TimelineEvaluation(e.id(), e.anchorTime(), e.ruleId(), e.outcome(), e.tierCode()));
            JsonNode indices = d.explanation() == null ? null : d.explanation().get("indices");
            if (indices == null) {
                continue;
            }
            for (JsonNode i : indices) {
                IndexCode code = parse(i.path("code").asText());
                if (code == null
                        || !indexPoints.containsKey(code)
                        || !i.path("value").isNumber()) {
                    continue;
                }
                Set<String> inputs = new LinkedHashSet<>();
                for (JsonNode in : i.path("inputs")) {
                    inputs.add(in.path("resourceType").asText() + "/"
                            + in.path("id").asText()
                            + (in.hasNonNull("version")
                                    ? "/_history/" + in.path("version").asText()
                                    : ""));
                }
                indexPoints
                        .get(code)
                        .putIfAbsent(
                                e.anchorTime(),
                                new TimelinePoint(
                                        e.anchorTime(), i.path("value").asDouble(), String.join(" ", inputs)));
            }
        }
        List<TimelineSeries> series = new ArrayList<>();
        indexPoints.forEach((code, byTime) -> series.add(
                new TimelineSeries(code.code(), code.display(), code.unit(), new ArrayList<>(byTime.values()))));
        List<TimelinePoint> peep = new ArrayList<>();
        List<TimelinePoint> fio2 = new ArrayList<>();
        for (AuditQueries.ValueAt v :
                queries.values(patient, List.of(QuantityKind.PEEP.name(), QuantityKind.FIO2.name()), from)) {
            if (v.kind().equals(QuantityKind.PEEP.name())) {
                peep.add(new TimelinePoint(v.time(), v.value(), v.source()));
            } else {
                fio2.add(new TimelinePoint(v.time(), Math.round(v.value() * 1000) / 10.0, v.source()));
            }
        }
        series.add(new TimelineSeries("peep", "PEEP", "cm[H2O]", peep));
        series.add(new TimelineSeries("fio2", "FiO2", "%", fio2));
        return new PatientTimeline(ref, series, queries.advisoriesOf(patient), points);
    }

    private static IndexCode parse(String text) {
        try {
            return IndexCode.valueOf(text);
        } catch (IllegalArgumentException e) {
            return IndexCode.fromCode(text).orElse(null);
        }
    }
}
