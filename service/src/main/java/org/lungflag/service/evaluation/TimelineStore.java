package org.lungflag.service.evaluation;

import com.fasterxml.jackson.core.JsonProcessingException;
import com.fasterxml.jackson.core.type.TypeReference;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.sql.ResultSet;
import java.sql.SQLException;
import java.sql.Timestamp;
import java.time.Clock;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.LinkedHashSet;
import java.util.List;
import java.util.Map;
import java.util.Set;
import org.lungflag.rules.measure.BodyPosition;
import org.lungflag.rules.measure.ClinicalFact;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.OriginalQuantity;
import org.lungflag.rules.measure.PositionState;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.SupportMode;
import org.lungflag.rules.measure.SupportState;
import org.lungflag.rules.measure.UnitRepair;
import org.lungflag.rules.measure.ValueRole;
import org.lungflag.rules.timeline.PatientTimeline;
import org.springframework.jdbc.core.namedparam.MapSqlParameterSource;
import org.springframework.jdbc.core.namedparam.NamedParameterJdbcTemplate;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.stereotype.Repository;

/**
 * The durable form of every patient timeline: normalized values in canonical units, one row per fact, keyed by the
 * resource version they came from. A timeline can always be rebuilt from here (after a restart, or when another
 * instance processed the patient), so in-memory timelines are only a cache.
 */
@Repository
class TimelineStore {

    /**
     * Withdraws the stored facts of resources that were replaced or retracted. It is looked up through the index
     * that starts with {@code source_id} (migration V5): with the source type first, H2 used only the type, which every
     * Observation shares, and so read every stored value (TimelineQueryPlanTest checks the plan).
     */
    static final String RETRACT_SQL = """
            UPDATE normalized_value SET retracted = TRUE
             WHERE source_id IN (:ids) AND source_type = :type AND NOT retracted
            """;

    private final JdbcClient jdbc;
    private final NamedParameterJdbcTemplate named;
    private final ObjectMapper json;
    private final Clock clock;

    TimelineStore(JdbcClient jdbc, NamedParameterJdbcTemplate named, ObjectMapper json, Clock clock) {
        this.jdbc = jdbc;
        this.named = named;
        this.json = json;
        this.clock = clock;
    }

    /** Writes kept for the end of a transaction, so a batch of the inbox costs two statements here, not two each. */
    Writes writes() {
        return new Writes();
    }

    /**
     * Stores and retractions of one transaction, written by {@link #flush()} with the same end result as doing them
     * one by one in order: first every retraction of rows already stored, then every new row, those of a version
     * replaced or withdrawn later in the same transaction already marked retracted.
     */
    final class Writes {
        private final Map<String, Set<String>> retractedIds = new LinkedHashMap<>();
        private final Map<String, List<MapSqlParameterSource>> pending = new LinkedHashMap<>();

        void store(String patientId, SourceRef source, List<? extends ClinicalFact> facts) {
            retract(source.resourceType(), source.id());
            Timestamp now = Timestamp.from(clock.instant());
            List<MapSqlParameterSource> rows =
                    pending.computeIfAbsent(key(source.resourceType(), source.id()), k -> new ArrayList<>());
            for (ClinicalFact fact : facts) {
                rows.add(row(patientId, source, fact, now));
            }
        }

        void retract(String resourceType, String resourceId) {
            retractedIds
                    .computeIfAbsent(resourceType, t -> new LinkedHashSet<>())
                    .add(resourceId);
            List<MapSqlParameterSource> rows = pending.get(key(resourceType, resourceId));
            if (rows != null) {
                rows.forEach(r -> r.addValue("retracted", true));
            }
        }

        void flush() {
            for (Map.Entry<String, Set<String>> e : retractedIds.entrySet()) {
                List<String> ids = new ArrayList<>(e.getValue());
                for (int from = 0; from < ids.size(); from += 500) {
                    jdbc.sql(RETRACT_SQL)
                            .param("type", e.getKey())
                            .param("ids", ids.subList(from, Math.min(ids.size(), from + 500)))
                            .update();
                }
            }
            List<MapSqlParameterSource> rows = new ArrayList<>();
            pending.values().forEach(rows::addAll);
            if (!rows.isEmpty()) {
                named.batchUpdate("""
                        INSERT INTO normalized_value (patient_id, source_type, source_id, source_version, kind, role, specimen,
                                                      value_canonical, unit_canonical, value_original, unit_original,
                                                      category, flow_lpm, repairs, clinical_time, recorded_at, retracted)
                        VALUES (:patient, :type, :id, :version, :kind, :role, :specimen, :value, :unit, :originalValue,
                                :originalUnit, :category, :flow, :repairs, :time, :now, :retracted)
                        """, rows.toArray(MapSqlParameterSource[]::new));
            }
            retractedIds.clear();
            pending.clear();
        }

        private static String key(String resourceType, String resourceId) {
            return resourceType + "/" + resourceId;
        }
    }

    private MapSqlParameterSource row(String patientId, SourceRef source, ClinicalFact fact, Timestamp now) {
        MapSqlParameterSource p = new MapSqlParameterSource()
                .addValue("patient", patientId)
                .addValue("type", source.resourceType())
                .addValue("id", source.id())
                .addValue("version", source.version())
                .addValue("kind", fact.kind().name())
                .addValue("time", Timestamp.from(fact.time()))
                .addValue("now", now)
                .addValue("retracted", false);
        if (fact instanceof Measurement m) {
            p.addValue("role", m.role().name())
                    .addValue("specimen", m.specimen().name())
                    .addValue("value", m.value())
                    .addValue("unit", m.unit())
                    .addValue(
                            "originalValue",
                            m.original() == null ? null : m.original().value())
                    .addValue(
                            "originalUnit",
                            m.original() == null ? null : m.original().unit())
                    .addValue("category", null)
                    .addValue("flow", null)
                    .addValue("repairs", m.repairs().isEmpty() ? null : write(m.repairs()));
        } else {
            String category = fact instanceof SupportState s
                    ? s.mode().name()
                    : ((PositionState) fact).position().name();
            Double flow = fact instanceof SupportState s ? s.flowLitresPerMinute() : null;
            p.addValue("role", null)
                    .addValue("specimen", null)
                    .addValue("value", null)
                    .addValue("unit", null)
                    .addValue("originalValue", null)
                    .addValue("originalUnit", null)
                    .addValue("category", category)
                    .addValue("flow", flow)
                    .addValue("repairs", null);
        }
        return p;
    }

    /** Rebuilds a patient's timeline from the stored facts of its window. */
    PatientTimeline load(String patientId, Duration window) {
        PatientTimeline timeline = new PatientTimeline(patientId, window);
        Timestamp latest = jdbc.sql(
                        "SELECT MAX(clinical_time) FROM normalized_value WHERE patient_id = :p AND NOT retracted")
                .param("p", patientId)
                .query((rs, n) -> rs.getTimestamp(1))
                .list()
                .get(0);
        if (latest == null) {
            return timeline;
        }
        Instant from = latest.toInstant().minus(window);
        Map<String, List<ClinicalFact>> byResource = new LinkedHashMap<>();
        Map<String, SourceRef> sources = new LinkedHashMap<>();
        jdbc.sql("""
                        SELECT * FROM normalized_value
                         WHERE patient_id = :p AND NOT retracted
                           AND (clinical_time >= :from OR kind IN ('RESPIRATORY_SUPPORT', 'BODY_POSITION', 'BODY_HEIGHT', 'BODY_WEIGHT'))
                         ORDER BY clinical_time, id
                        """)
                .param("p", patientId)
                .param("from", Timestamp.from(from))
                .query((rs, n) -> {
                    SourceRef source = new SourceRef(
                            rs.getString("source_type"), rs.getString("source_id"), rs.getString("source_version"));
                    String key = source.toString();
                    sources.putIfAbsent(key, source);
                    byResource.computeIfAbsent(key, k -> new ArrayList<>()).add(fact(rs, source));
                    return null;
                })
                .list();
        // offer in clinical order so the window is applied as it would have been live
        for (Map.Entry<String, List<ClinicalFact>> e : byResource.entrySet()) {
            timeline.addResource(sources.get(e.getKey()), e.getValue());
        }
        return timeline;
    }

    private ClinicalFact fact(ResultSet rs, SourceRef source) throws SQLException {
        QuantityKind kind = QuantityKind.valueOf(rs.getString("kind"));
        Instant time = rs.getTimestamp("clinical_time").toInstant();
        if (kind == QuantityKind.RESPIRATORY_SUPPORT) {
            double flow = rs.getDouble("flow_lpm");
            Double flowValue = rs.wasNull() ? null : flow;
            return new SupportState(SupportMode.valueOf(rs.getString("category")), flowValue, time, source);
        }
        if (kind == QuantityKind.BODY_POSITION) {
            return new PositionState(BodyPosition.valueOf(rs.getString("category")), time, source);
        }
        double original = rs.getDouble("value_original");
        OriginalQuantity originalQuantity =
                rs.wasNull() ? null : new OriginalQuantity(original, rs.getString("unit_original"));
        String repairs = rs.getString("repairs");
        return new Measurement(
                kind,
                rs.getDouble("value_canonical"),
                time,
                ValueRole.valueOf(rs.getString("role")),
                SpecimenKind.valueOf(rs.getString("specimen")),
                source,
                originalQuantity,
                repairs == null ? List.of() : read(repairs));
    }

    private String write(List<UnitRepair> repairs) {
        try {
            return json.writeValueAsString(repairs);
        } catch (JsonProcessingException e) {
            throw new IllegalStateException("cannot encode unit repairs", e);
        }
    }

    private List<UnitRepair> read(String repairs) {
        try {
            return json.readValue(repairs, new TypeReference<List<UnitRepair>>() {});
        } catch (JsonProcessingException e) {
            throw new IllegalStateException("cannot decode stored unit repairs", e);
        }
    }
}
