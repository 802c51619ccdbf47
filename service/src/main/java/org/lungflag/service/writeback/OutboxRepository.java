package org.lungflag.service.writeback;

import java.sql.ResultSet;
import java.sql.SQLException;
import java.sql.Timestamp;
import java.time.Clock;
import java.time.Duration;
import java.time.Instant;
import java.util.List;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.stereotype.Repository;
import org.springframework.transaction.annotation.Transactional;

/**
 * The outbox: rows are inserted in the same transaction as the audit rows that caused them, and delivered in order
 * per patient, so per episode too (a Flag's onset before its escalation before its resolution). Rows are claimed
 * with {@code FOR UPDATE SKIP LOCKED} and a lease, so several instances share the work and a crashed instance's rows
 * are retried. Per patient rather than per episode: one patient's writes (the Flags of different episodes, the
 * derived-index Observations that several evaluations cite, which have no episode) are never sent by two
 * instances at once, so the FHIR server never sees two concurrent conditional updates for one patient's records.
 */
@Repository
public class OutboxRepository {

    /**
     * Rows due now (waiting, or in flight with an expired lease) whose patient has no earlier row waiting or in flight.
     * The statuses are named with IN, not an OR of two conditions: with the OR, H2 walked the whole primary key on
     * every round, delivered rows included (OutboxQueryPlanTest checks the plan).
     */
    static final String CLAIM_SQL = """
            SELECT o.id FROM outbox o
             WHERE o.status IN ('PENDING', 'SENDING') AND o.next_attempt_at <= :now
               AND NOT EXISTS (SELECT 1 FROM outbox e
                                WHERE e.patient_id = o.patient_id AND e.id < o.id
                                  AND e.status IN ('PENDING', 'SENDING'))
             ORDER BY o.id
             FETCH FIRST :limit ROWS ONLY
             FOR UPDATE SKIP LOCKED
            """;

    private final JdbcClient jdbc;
    private final Clock clock;

    OutboxRepository(JdbcClient jdbc, Clock clock) {
        this.jdbc = jdbc;
        this.clock = clock;
    }

    /** Adds a row in the caller's transaction. Silent-mode rows are stored as SUPPRESSED and never sent. */
    public long add(
            OutboxKind kind, String episodeKey, String patientId, Long evaluationId, String payload, boolean silent) {
        var keys = new org.springframework.jdbc.support.GeneratedKeyHolder();
        Timestamp now = Timestamp.from(clock.instant());
        jdbc.sql("""
                        INSERT INTO outbox (kind, episode_key, patient_id, evaluation_id, payload, status, attempts,
                                            next_attempt_at, created_at)
                        VALUES (:kind, :episode, :patient, :evaluation, :payload, :status, 0, :now, :now)
                        """)
                .param("kind", kind.name())
                .param("episode", episodeKey)
                .param("patient", patientId)
                .param("evaluation", evaluationId)
                .param("payload", payload)
                .param("status", silent ? OutboxStatus.SUPPRESSED.name() : OutboxStatus.PENDING.name())
                .param("now", now)
                .update(keys, "id");
        return keys.getKeyAs(Number.class).longValue();
    }

    /**
     * Claims up to {@code limit} rows due now, skipping any row whose patient has an earlier row still waiting or in
     * flight, and leases them for {@code lease}.
     */
    @Transactional
    public List<OutboxRow> claim(int limit, Duration lease) {
        Instant now = clock.instant();
        List<Long> ids = jdbc.sql(CLAIM_SQL)
                .param("now", Timestamp.from(now))
                .param("limit", limit)
                .query(Long.class)
                .list();
        if (ids.isEmpty()) {
            return List.of();
        }
        jdbc.sql(
                        "UPDATE outbox SET status = 'SENDING', next_attempt_at = :until, attempts = attempts + 1 WHERE id IN (:ids)")
                .param("until", Timestamp.from(now.plus(lease)))
                .param("ids", ids)
                .update();
        return jdbc.sql("SELECT * FROM outbox WHERE id IN (:ids) ORDER BY id")
                .param("ids", ids)
                .query(OutboxRepository::map)
                .list();
    }

    /** Records that the Flag was written, so a retry only redoes the Provenance step. */
    public void flagWritten(long id, String versionedRef) {
        jdbc.sql("UPDATE outbox SET step = 'FLAG_WRITTEN', result_ref = :ref WHERE id = :id")
                .param("ref", versionedRef)
                .param("id", id)
                .update();
    }

    public String step(long id) {
        return jdbc.sql("SELECT step FROM outbox WHERE id = :id")
                .param("id", id)
                .query((rs, n) -> rs.getString(1))
                .list()
                .get(0);
    }

    public void delivered(long id, String resultRef) {
        jdbc.sql("""
                        UPDATE outbox SET status = 'DELIVERED', delivered_at = :now, step = 'DONE',
                               result_ref = COALESCE(:ref, result_ref), last_error = NULL
                         WHERE id = :id
                        """)
                .param("now", Timestamp.from(clock.instant()))
                .param("ref", resultRef)
                .param("id", id)
                .update();
    }

    /** Schedules another attempt after a transient failure. */
    public void retryLater(long id, Instant at, String error) {
        jdbc.sql("UPDATE outbox SET status = 'PENDING', next_attempt_at = :at, last_error = :error WHERE id = :id")
                .param("at", Timestamp.from(at))
                .param("error", error)
                .param("id", id)
                .update();
    }

    public void quarantined(long id, String error) {
        jdbc.sql("UPDATE outbox SET status = 'QUARANTINED', last_error = :error WHERE id = :id")
                .param("error", error)
                .param("id", id)
                .update();
    }

    /** Rows waiting or in flight, and the creation time of the oldest. */
    public Backlog backlog() {
        return jdbc.sql("SELECT COUNT(*), MIN(created_at) FROM outbox WHERE status IN ('PENDING', 'SENDING')")
                .query((rs, n) -> new Backlog(
                        rs.getLong(1),
                        rs.getTimestamp(2) == null ? null : rs.getTimestamp(2).toInstant()))
                .single();
    }

    public List<OutboxRow> forEpisode(String episodeKey) {
        return jdbc.sql("SELECT * FROM outbox WHERE episode_key = :key ORDER BY id")
                .param("key", episodeKey)
                .query(OutboxRepository::map)
                .list();
    }

    public long count(OutboxStatus status) {
        return jdbc.sql("SELECT COUNT(*) FROM outbox WHERE status = :status")
                .param("status", status.name())
                .query(Long.class)
                .single();
    }

    public record Backlog(long count, Instant oldestCreatedAt) {}

    static OutboxRow map(ResultSet rs, int row) throws SQLException {
        Timestamp delivered = rs.getTimestamp("delivered_at");
        long evaluationValue = rs.getLong("evaluation_id");
        Long evaluation = rs.wasNull() ? null : evaluationValue;
        return new OutboxRow(
                rs.getLong("id"),
                OutboxKind.valueOf(rs.getString("kind")),
                rs.getString("episode_key"),
                rs.getString("patient_id"),
                evaluation,
                rs.getString("payload"),
                OutboxStatus.valueOf(rs.getString("status")),
                rs.getInt("attempts"),
                rs.getTimestamp("next_attempt_at").toInstant(),
                rs.getString("last_error"),
                rs.getTimestamp("created_at").toInstant(),
                delivered == null ? null : delivered.toInstant(),
                rs.getString("result_ref"));
    }
}
