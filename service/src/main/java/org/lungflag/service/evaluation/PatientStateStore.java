package org.lungflag.service.evaluation;

import com.fasterxml.jackson.core.JsonProcessingException;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.sql.Connection;
import java.sql.SQLException;
import java.sql.Timestamp;
import java.time.Clock;
import java.time.Instant;
import java.util.Optional;
import javax.sql.DataSource;
import org.lungflag.rules.engine.EngineState;
import org.lungflag.rules.engine.PatientEvaluator.Resumable;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.stereotype.Repository;

/**
 * Per-patient engine state and the lock that serializes work on one patient. On PostgreSQL the lock is a
 * transaction-level advisory lock ({@code pg_advisory_xact_lock}) so two instances never evaluate one patient at
 * once; on H2 (single instance) it is a row lock on the patient's state row. Either way it is released at commit
 * or rollback. {@code state_seq} moves on every change, so an instance can tell whether its cached timeline is
 * still current.
 */
@Repository
class PatientStateStore {

    private final JdbcClient jdbc;
    private final ObjectMapper json;
    private final Clock clock;
    private final boolean postgres;

    PatientStateStore(JdbcClient jdbc, ObjectMapper json, Clock clock, DataSource dataSource) throws SQLException {
        this.jdbc = jdbc;
        this.json = json;
        this.clock = clock;
        try (Connection c = dataSource.getConnection()) {
            this.postgres =
                    c.getMetaData().getDatabaseProductName().toLowerCase().contains("postgres");
        }
    }

    /**
     * The stored state, its sequence number and, when written by this version, the evaluator's checkpoints.
     *
     * @param resumable {@code null} for a row written before checkpoints were kept
     */
    record Stored(EngineState state, Resumable resumable, long seq) {}

    /** Takes the patient's lock for the current transaction and returns the stored state (creating the row). */
    Optional<Stored> lockAndLoad(String patientId) {
        if (postgres) {
            // taken first, so creating the state row below cannot race another instance
            jdbc.sql("SELECT pg_advisory_xact_lock(:key)")
                    .param("key", lockKey(patientId))
                    .query(Object.class)
                    .list();
        }
        ensureRow(patientId);
        return jdbc.sql(
                        "SELECT engine_state, engine_resume, state_seq FROM patient_state WHERE patient_id = :p FOR UPDATE")
                .param("p", patientId)
                .query((rs, n) -> {
                    String state = rs.getString("engine_state");
                    String resume = rs.getString("engine_resume");
                    return state == null
                            ? null
                            : new Stored(
                                    read(state, EngineState.class),
                                    resume == null ? null : read(resume, Resumable.class),
                                    rs.getLong("state_seq"));
                })
                .optional();
    }

    /** The sequence number without locking. */
    long seq(String patientId) {
        return jdbc.sql("SELECT state_seq FROM patient_state WHERE patient_id = :p")
                .param("p", patientId)
                .query(Long.class)
                .optional()
                .orElse(0L);
    }

    /** Saves the evaluator's state and checkpoints and moves the sequence on. Returns the new sequence number. */
    long save(String patientId, Resumable resumable, Instant latestClinical, long expectedSeq) {
        long next = expectedSeq + 1;
        jdbc.sql("""
                        UPDATE patient_state SET engine_state = :state, engine_resume = :resume, state_seq = :next,
                               latest_clinical = :latest, updated_at = :now
                         WHERE patient_id = :p
                        """)
                .param("state", write(resumable.current()))
                .param("resume", write(resumable))
                .param("next", next)
                .param("latest", latestClinical == null ? null : Timestamp.from(latestClinical))
                .param("now", Timestamp.from(clock.instant()))
                .param("p", patientId)
                .update();
        return next;
    }

    /**
     * Creates the state row if missing. {@code ON CONFLICT DO NOTHING}: the patient directory may create the row at
     * the same moment from another instance (it caches demographics there without this lock), and a failed insert
     * would abort the whole transaction on PostgreSQL.
     */
    private void ensureRow(String patientId) {
        jdbc.sql("""
                        INSERT INTO patient_state (patient_id, state_seq, updated_at) VALUES (:p, 0, :now)
                        ON CONFLICT DO NOTHING
                        """)
                .param("p", patientId)
                .param("now", Timestamp.from(clock.instant()))
                .update();
    }

    /** A stable 64-bit key for the advisory lock. */
    static long lockKey(String patientId) {
        long h = 1125899906842597L;
        for (int i = 0; i < patientId.length(); i++) {
            h = 31 * h + patientId.charAt(i);
        }
        return h;
    }

    private String write(Object state) {
        try {
            return json.writeValueAsString(state);
        } catch (JsonProcessingException e) {
            throw new IllegalStateException("cannot encode the engine state", e);
        }
    }

    private <T> T read(String state, Class<T> type) {
        try {
            return json.readValue(state, type);
        } catch (JsonProcessingException e) {
            throw new IllegalStateException("cannot decode the stored engine state", e);
        }
    }
}
