package org.lungflag.service.evaluation;

import java.sql.ResultSet;
import java.sql.SQLException;
import java.sql.Timestamp;
import java.time.Clock;
import java.time.Instant;
import java.util.List;
import java.util.Optional;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.stereotype.Repository;

/**
 * The advisory episodes Lungflag has decided on, with the Flag state last queued for each. Comparing the engine's
 * episodes with these rows tells which Flag writes are due.
 */
@Repository
public class EpisodeRepository {

    private final JdbcClient jdbc;
    private final Clock clock;

    EpisodeRepository(JdbcClient jdbc, Clock clock) {
        this.jdbc = jdbc;
        this.clock = clock;
    }

    /** One stored episode. {@code status} is ACTIVE, RESOLVED, EXPIRED or ENTERED_IN_ERROR. */
    public record EpisodeRow(
            String key,
            String patientId,
            String ruleId,
            String ruleVersion,
            String code,
            String status,
            Instant startedAt,
            Instant endedAt,
            String mode,
            String flagId,
            String flagVersion,
            String flagResource,
            Instant updatedAt) {}

    public Optional<EpisodeRow> get(String key) {
        return jdbc.sql("SELECT * FROM episode WHERE episode_key = :key")
                .param("key", key)
                .query(EpisodeRepository::map)
                .optional();
    }

    public List<EpisodeRow> forPatient(String patientId) {
        return jdbc.sql("SELECT * FROM episode WHERE patient_id = :p ORDER BY started_at, episode_key")
                .param("p", patientId)
                .query(EpisodeRepository::map)
                .list();
    }

    /** Patients with at least one active episode (the clock advancer moves their clinical time on). */
    public List<String> patientsWithActiveEpisodes() {
        return jdbc.sql("SELECT DISTINCT patient_id FROM episode WHERE status = 'ACTIVE' ORDER BY patient_id")
                .query(String.class)
                .list();
    }

    public long countActive() {
        return jdbc.sql("SELECT COUNT(*) FROM episode WHERE status = 'ACTIVE'")
                .query(Long.class)
                .single();
    }

    void upsert(
            String key,
            String patientId,
            String ruleId,
            String ruleVersion,
            String code,
            String status,
            Instant start,
            Instant end,
            String endReason,
            EvaluationMode mode,
            String flagResource) {
        Timestamp now = Timestamp.from(clock.instant());
        int updated = jdbc.sql("""
                        UPDATE episode SET rule_version = :version, code = :code, status = :status, ended_at = :end,
                               end_reason = :reason, mode = :mode, flag_resource = :flag, updated_at = :now
                         WHERE episode_key = :key
                        """)
                .param("version", ruleVersion)
                .param("code", code)
                .param("status", status)
                .param("end", end == null ? null : Timestamp.from(end))
                .param("reason", endReason)
                .param("mode", mode.name())
                .param("flag", flagResource)
                .param("now", now)
                .param("key", key)
                .update();
        if (updated == 0) {
            jdbc.sql("""
                            INSERT INTO episode (episode_key, patient_id, rule_id, rule_version, code, status, started_at,
                                                 ended_at, end_reason, mode, flag_resource, updated_at)
                            VALUES (:key, :patient, :rule, :version, :code, :status, :start, :end, :reason, :mode,
                                    :flag, :now)
                            """)
                    .param("key", key)
                    .param("patient", patientId)
                    .param("rule", ruleId)
                    .param("version", ruleVersion)
                    .param("code", code)
                    .param("status", status)
                    .param("start", Timestamp.from(start))
                    .param("end", end == null ? null : Timestamp.from(end))
                    .param("reason", endReason)
                    .param("mode", mode.name())
                    .param("flag", flagResource)
                    .param("now", now)
                    .update();
        }
    }

    static EpisodeRow map(ResultSet rs, int n) throws SQLException {
        Timestamp ended = rs.getTimestamp("ended_at");
        return new EpisodeRow(
                rs.getString("episode_key"),
                rs.getString("patient_id"),
                rs.getString("rule_id"),
                rs.getString("rule_version"),
                rs.getString("code"),
                rs.getString("status"),
                rs.getTimestamp("started_at").toInstant(),
                ended == null ? null : ended.toInstant(),
                rs.getString("mode"),
                rs.getString("flag_id"),
                rs.getString("flag_version"),
                rs.getString("flag_resource"),
                rs.getTimestamp("updated_at").toInstant());
    }
}
