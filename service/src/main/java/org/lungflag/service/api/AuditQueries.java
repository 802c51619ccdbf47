package org.lungflag.service.api;

import com.fasterxml.jackson.core.JsonProcessingException;
import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.sql.ResultSet;
import java.sql.SQLException;
import java.sql.Timestamp;
import java.time.Instant;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import org.lungflag.service.api.ApiRecords.AdvisoryFilter;
import org.lungflag.service.api.ApiRecords.AdvisoryRow;
import org.lungflag.service.api.ApiRecords.EvaluationDetail;
import org.lungflag.service.api.ApiRecords.EvaluationFilter;
import org.lungflag.service.api.ApiRecords.EvaluationRow;
import org.lungflag.service.api.ApiRecords.ModeChange;
import org.lungflag.service.api.ApiRecords.QuarantineFilter;
import org.lungflag.service.api.ApiRecords.QuarantineRow;
import org.lungflag.service.api.ApiRecords.WriteRow;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.stereotype.Repository;

/**
 * The audit store's read queries for the API and the console. Plain SQL that runs the same on H2 (PostgreSQL mode)
 * and PostgreSQL; day buckets and medians are computed in Java in UTC so neither database's time zone matters.
 */
@Repository
public class AuditQueries {

    /** The most rows one list call returns. */
    public static final int MAX_LIMIT = 5000;

    private final JdbcClient jdbc;
    private final ObjectMapper json;

    AuditQueries(JdbcClient jdbc, ObjectMapper json) {
        this.jdbc = jdbc;
        this.json = json;
    }

    /** "Patient/abc" or "abc" to "abc". */
    static String patientId(String reference) {
        if (reference == null || reference.isBlank()) {
            return null;
        }
        String r = reference.trim();
        return r.startsWith("Patient/") ? r.substring("Patient/".length()) : r;
    }

    static int limit(int requested) {
        return requested <= 0 ? 200 : Math.min(requested, MAX_LIMIT);
    }

    private static final class Where {
        final StringBuilder sql = new StringBuilder();
        final Map<String, Object> params = new LinkedHashMap<>();

        Where eq(String column, String name, Object value) {
            if (value != null && !(value instanceof String s && s.isBlank())) {
                sql.append(sql.isEmpty() ? " WHERE " : " AND ")
                        .append(column)
                        .append(" = :")
                        .append(name);
                params.put(name, value);
            }
            return this;
        }

        Where cmp(String column, String op, String name, Instant value) {
            if (value != null) {
                sql.append(sql.isEmpty() ? " WHERE " : " AND ")
                        .append(column)
                        .append(' ')
                        .append(op)
                        .append(" :")
                        .append(name);
                params.put(name, Timestamp.from(value));
            }
            return this;
        }

        Where raw(String condition) {
            sql.append(sql.isEmpty() ? " WHERE " : " AND ").append(condition);
            return this;
        }
    }

    private JdbcClient.StatementSpec statement(String sql, Where where) {
        JdbcClient.StatementSpec spec = jdbc.sql(sql);
        for (Map.Entry<String, Object> p : where.params.entrySet()) {
            spec = spec.param(p.getKey(), p.getValue());
        }
        return spec;
    }

    // --- advisories ------------------------------------------------------------------------------------------------

    public List<AdvisoryRow> advisories(AdvisoryFilter f) {
        Where w = new Where()
                .eq("rule_id", "rule", f.rule())
                .eq("code", "code", f.code())
                .eq("status", "status", f.status() == null ? null : f.status().toUpperCase())
                .eq("patient_id", "patient", patientId(f.patient()))
                .cmp("started_at", ">=", "from", f.from())
                .cmp("started_at", "<", "to", f.to());
        w.params.put("offset", Math.max(0, f.offset()));
        w.params.put("limit", limit(f.limit()));
        return statement(
                        "SELECT * FROM episode" + w.sql
                                + " ORDER BY started_at DESC, episode_key OFFSET :offset ROWS FETCH FIRST :limit ROWS ONLY",
                        w)
                .query(AuditQueries::advisory)
                .list();
    }

    public Optional<AdvisoryRow> advisory(String key) {
        return jdbc.sql("SELECT * FROM episode WHERE episode_key = :k")
                .param("k", key)
                .query(AuditQueries::advisory)
                .optional();
    }

    /** Episodes of one patient, oldest first. */
    public List<AdvisoryRow> advisoriesOf(String patient) {
        return jdbc.sql("SELECT * FROM episode WHERE patient_id = :p ORDER BY started_at, episode_key")
                .param("p", patientId(patient))
                .query(AuditQueries::advisory)
                .list();
    }

    static AdvisoryRow advisory(ResultSet rs, int n) throws SQLException {
        return new AdvisoryRow(
                rs.getString("episode_key"),
                "Patient/" + rs.getString("patient_id"),
                rs.getString("rule_id"),
                rs.getString("rule_version"),
                rs.getString("code"),
                rs.getString("status"),
                instant(rs, "started_at"),
                instant(rs, "ended_at"),
                rs.getString("end_reason"),
                rs.getString("mode"),
                rs.getString("flag_id"),
                instant(rs, "updated_at"));
    }

    // --- evaluations -----------------------------------------------------------------------------------------------

    public List<EvaluationRow> evaluations(EvaluationFilter f) {
        Where w = new Where()
                .eq("patient_id", "patient", patientId(f.patient()))
                .eq("rule_id", "rule", f.rule())
                .eq(
                        "outcome",
                        "outcome",
                        f.outcome() == null ? null : f.outcome().toUpperCase())
                .cmp("anchor_time", ">=", "from", f.from())
                .cmp("anchor_time", "<", "to", f.to());
        if (!f.includeSuperseded()) {
            w.raw("NOT superseded");
        }
        w.params.put("offset", Math.max(0, f.offset()));
        w.params.put("limit", limit(f.limit()));
        return statement(
                        "SELECT * FROM evaluation" + w.sql
                                + " ORDER BY anchor_time DESC, id DESC OFFSET :offset ROWS FETCH FIRST :limit ROWS ONLY",
                        w)
                .query(AuditQueries::evaluation)
                .list();
    }

    public Optional<EvaluationDetail> evaluation(long id) {
        return jdbc.sql("SELECT * FROM evaluation WHERE id = :id")
                .param("id", id)
                .query((rs, n) -> new EvaluationDetail(evaluation(rs, n), tree(rs.getString("explanation"))))
                .optional();
    }

    /** Every evaluation recorded for an episode (superseded ones included, marked), in clinical then insertion order. */
    public List<EvaluationDetail> evaluationsOfEpisode(String key) {
        return jdbc.sql("SELECT * FROM evaluation WHERE episode_key = :k ORDER BY anchor_time, id")
                .param("k", key)
                .query((rs, n) -> new EvaluationDetail(evaluation(rs, n), tree(rs.getString("explanation"))))
                .list();
    }

    /** A patient's current (not superseded) evaluations with explanations, oldest first. */
    public List<EvaluationDetail> currentEvaluationsOf(String patient, Instant from) {
        Where w = new Where().eq("patient_id", "p", patientId(patient)).raw("NOT superseded");
        w.cmp("anchor_time", ">=", "from", from);
        return statement("SELECT * FROM evaluation" + w.sql + " ORDER BY anchor_time, id", w)
                .query((rs, n) -> new EvaluationDetail(evaluation(rs, n), tree(rs.getString("explanation"))))
                .list();
    }

    static EvaluationRow evaluation(ResultSet rs, int n) throws SQLException {
        return new EvaluationRow(
                rs.getLong("id"),
                "Patient/" + rs.getString("patient_id"),
                rs.getString("rule_id"),
                rs.getString("rule_version"),
                rs.getString("rule_digest"),
                instant(rs, "anchor_time"),
                instant(rs, "evaluated_at"),
                rs.getString("outcome"),
                rs.getString("tier_code"),
                rs.getString("reason_code"),
                rs.getString("detail"),
                rs.getString("episode_key"),
                rs.getString("mode"),
                rs.getBoolean("superseded"));
    }

    // --- writes ----------------------------------------------------------------------------------------------------

    public List<WriteRow> writesOfEpisode(String key) {
        return jdbc.sql("SELECT id, kind, status, attempts, created_at, delivered_at, result_ref FROM outbox"
                        + " WHERE episode_key = :k ORDER BY id")
                .param("k", key)
                .query((rs, n) -> new WriteRow(
                        rs.getLong("id"),
                        rs.getString("kind"),
                        rs.getString("status"),
                        rs.getInt("attempts"),
                        instant(rs, "created_at"),
                        instant(rs, "delivered_at"),
                        rs.getString("result_ref")))
                .list();
    }

    // --- quarantine ------------------------------------------------------------------------------------------------

    public List<QuarantineRow> quarantine(QuarantineFilter f) {
        Where w = new Where()
                .eq("reason_code", "reason", f.reason())
                .eq("stage", "stage", f.stage() == null ? null : f.stage().toUpperCase())
                .cmp("created_at", ">=", "from", f.from())
                .cmp("created_at", "<", "to", f.to());
        w.params.put("offset", Math.max(0, f.offset()));
        w.params.put("limit", limit(f.limit()));
        return statement(
                        "SELECT id, stage, resource_type, resource_id, version_id, patient_id, reason_code, detail,"
                                + " body_sha256, server_outcome IS NOT NULL AS has_outcome, created_at FROM quarantine"
                                + w.sql + " ORDER BY id DESC OFFSET :offset ROWS FETCH FIRST :limit ROWS ONLY",
                        w)
                .query((rs, n) -> {
                    String type = rs.getString("resource_type");
                    String id = rs.getString("resource_id");
                    String version = rs.getString("version_id");
                    String ref = type == null || id == null
                            ? null
                            : version == null ? type + "/" + id : type + "/" + id + "/_history/" + version;
                    String patient = rs.getString("patient_id");
                    return new QuarantineRow(
                            rs.getLong("id"),
                            rs.getString("stage"),
                            ref,
                            patient == null ? null : "Patient/" + patient,
                            rs.getString("reason_code"),
                            rs.getString("detail"),
                            rs.getString("body_sha256"),
                            rs.getBoolean("has_outcome"),
                            instant(rs, "created_at"));
                })
                .list();
    }

    // --- rule mode changes -----------------------------------------------------------------------------------------

    public List<ModeChange> modeChanges(String ruleId) {
        Where w = new Where().eq("rule_id", "rule", ruleId);
        return statement("SELECT * FROM rule_mode_change" + w.sql + " ORDER BY changed_at DESC, id DESC", w)
                .query((rs, n) -> new ModeChange(
                        rs.getLong("id"),
                        rs.getString("rule_id"),
                        rs.getString("previous_mode"),
                        rs.getString("new_mode"),
                        rs.getString("changed_by"),
                        rs.getString("reason"),
                        instant(rs, "changed_at")))
                .list();
    }

    // --- statistics inputs -----------------------------------------------------------------------------------------

    /** An episode's rule, start, end and status, for statistics. */
    public record EpisodeSpan(String ruleId, String patientId, Instant start, Instant end, String status) {}

    /** Episodes that started in [from, to), withdrawn ones (entered in error) left out. */
    public List<EpisodeSpan> episodeSpans(Instant from, Instant to) {
        return jdbc.sql("SELECT rule_id, patient_id, started_at, ended_at, status FROM episode"
                        + " WHERE started_at >= :from AND started_at < :to AND status <> 'ENTERED_IN_ERROR'")
                .param("from", Timestamp.from(from))
                .param("to", Timestamp.from(to))
                .query((rs, n) -> new EpisodeSpan(
                        rs.getString(1),
                        rs.getString(2),
                        instant(rs, "started_at"),
                        instant(rs, "ended_at"),
                        rs.getString(5)))
                .list();
    }

    /** A patient's charted invasive-ventilation record time. */
    public record VentilatedAt(String patientId, Instant time) {}

    /** Every normalized respiratory-support value of invasive ventilation in [from, to) (retracted ones left out). */
    public List<VentilatedAt> invasiveVentilationRecords(Instant from, Instant to) {
        return jdbc.sql("SELECT DISTINCT patient_id, clinical_time FROM normalized_value"
                        + " WHERE kind = 'RESPIRATORY_SUPPORT' AND category = 'INVASIVE_VENTILATION' AND NOT retracted"
                        + " AND clinical_time >= :from AND clinical_time < :to")
                .param("from", Timestamp.from(from))
                .param("to", Timestamp.from(to))
                .query((rs, n) -> new VentilatedAt(rs.getString(1), instant(rs, "clinical_time")))
                .list();
    }

    /** A normalized numeric value of a patient. */
    public record ValueAt(String kind, String role, Instant time, double value, String unit, String source) {}

    /** A patient's numeric normalized values of the given kinds since {@code from}, oldest first. */
    public List<ValueAt> values(String patient, List<String> kinds, Instant from) {
        return jdbc.sql("SELECT kind, role, clinical_time, value_canonical, unit_canonical, source_type, source_id,"
                        + " source_version FROM normalized_value WHERE patient_id = :p AND kind IN (:kinds)"
                        + " AND NOT retracted AND value_canonical IS NOT NULL AND clinical_time >= :from"
                        + " ORDER BY clinical_time, id")
                .param("p", patientId(patient))
                .param("kinds", kinds)
                .param("from", Timestamp.from(from))
                .query((rs, n) -> {
                    String version = rs.getString("source_version");
                    String source = rs.getString("source_type") + "/" + rs.getString("source_id")
                            + (version == null ? "" : "/_history/" + version);
                    return new ValueAt(
                            rs.getString("kind"),
                            rs.getString("role"),
                            instant(rs, "clinical_time"),
                            rs.getDouble("value_canonical"),
                            rs.getString("unit_canonical"),
                            source);
                })
                .list();
    }

    /** The newest clinical time of a patient's records, if any. */
    public Optional<Instant> latestClinicalTime(String patient) {
        return jdbc.sql("SELECT MAX(clinical_time) FROM normalized_value WHERE patient_id = :p")
                .param("p", patientId(patient))
                .query((rs, n) -> instant(rs, 1))
                .optional()
                .filter(i -> i != null);
    }

    // --- overview --------------------------------------------------------------------------------------------------

    /** When the last rest-hook or bus notification was recorded. */
    public Optional<Instant> lastNotification() {
        return jdbc.sql("SELECT MAX(received_at) FROM intake_inbox WHERE channel IN ('REST_HOOK', 'BUS')")
                .query((rs, n) -> instant(rs, 1))
                .optional()
                .filter(i -> i != null);
    }

    private static Instant instant(ResultSet rs, String column) throws SQLException {
        Timestamp t = rs.getTimestamp(column);
        return t == null ? null : t.toInstant();
    }

    private static Instant instant(ResultSet rs, int column) throws SQLException {
        Timestamp t = rs.getTimestamp(column);
        return t == null ? null : t.toInstant();
    }

    private JsonNode tree(String explanation) {
        if (explanation == null) {
            return null;
        }
        try {
            return json.readTree(explanation);
        } catch (JsonProcessingException e) {
            throw new IllegalStateException("a stored explanation is not JSON", e);
        }
    }

    /** Distinct rule ids with evaluations (for filters). */
    public List<String> ruleIdsSeen() {
        return new ArrayList<>(jdbc.sql("SELECT DISTINCT rule_id FROM episode ORDER BY rule_id")
                .query(String.class)
                .list());
    }
}
