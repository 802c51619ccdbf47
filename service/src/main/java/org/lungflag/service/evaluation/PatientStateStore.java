package org.lungflag.service.evaluation;

import com.fasterxml.jackson.core.JsonProcessingException;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.sql.Connection;
import java.sql.SQLException;
import java.sql.Timestamp;
import java.time.Clock;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Collection;
import java.util.Comparator;
import java.util.HashMap;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import javax.sql.DataSource;
import org.lungflag.rules.engine.EngineState;
import org.lungflag.rules.engine.PatientEvaluator.Resumable;
import org.springframework.jdbc.core.namedparam.MapSqlParameterSource;
import org.springframework.jdbc.core.namedparam.NamedParameterJdbcTemplate;
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
    private final NamedParameterJdbcTemplate named;
    private final ObjectMapper json;
    private final Clock clock;
    private final boolean postgres;

    PatientStateStore(
            JdbcClient jdbc, NamedParameterJdbcTemplate named, ObjectMapper json, Clock clock, DataSource dataSource)
            throws SQLException {
        this.jdbc = jdbc;
        this.named = named;
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

    /**
     * Takes the locks of several patients for the current transaction, in one fixed order (advisory lock key, then
     * id) so two instances locking overlapping batches cannot deadlock, and returns each patient's sequence number.
     * The stored state is decoded only for the patients in {@code decode}: the others' cached evaluators are
     * current when the sequence matches, which the caller checks.
     *
     * @return per patient, the stored state (or {@code null} when none was saved yet) and its sequence number
     */
    Map<String, Locked> lockAll(List<String> patientIds) {
        List<String> ordered = lockOrder(patientIds);
        if (postgres) {
            // one statement; unnest yields the keys in array order, so the locks are taken in that order
            jdbc.sql("SELECT pg_advisory_xact_lock(k) FROM unnest(ARRAY[:keys]::bigint[]) AS t(k)")
                    .param(
                            "keys",
                            ordered.stream().map(PatientStateStore::lockKey).toList())
                    .query(Object.class)
                    .list();
        }
        // the rows are created if missing with ON CONFLICT DO NOTHING: the patient directory may create a row at the
        // same moment from another instance (it caches demographics there without this lock), and a failed insert
        // would abort the whole transaction on PostgreSQL
        Timestamp now = Timestamp.from(clock.instant());
        named.batchUpdate(
                """
                INSERT INTO patient_state (patient_id, state_seq, updated_at) VALUES (:p, 0, :now)
                ON CONFLICT DO NOTHING
                """,
                ordered.stream()
                        .map(p -> new MapSqlParameterSource().addValue("p", p).addValue("now", now))
                        .toArray(MapSqlParameterSource[]::new));
        Map<String, Locked> out = new LinkedHashMap<>();
        jdbc.sql("""
                        SELECT patient_id, state_seq, engine_state IS NOT NULL AS has_state FROM patient_state
                         WHERE patient_id IN (:ids) ORDER BY patient_id FOR UPDATE
                        """)
                .param("ids", ordered)
                .query((rs, n) -> out.put(
                        rs.getString("patient_id"),
                        new Locked(
                                rs.getBoolean("has_state") ? rs.getLong("state_seq") : 0L, rs.getBoolean("has_state"))))
                .list();
        return out;
    }

    /** A locked patient's sequence number, and whether any state was saved yet. */
    record Locked(long seq, boolean hasState) {}

    /** The stored state of patients already locked in this transaction (see {@link #lockAll}). */
    Map<String, Stored> loadLocked(List<String> patientIds) {
        Map<String, Stored> out = new HashMap<>();
        if (patientIds.isEmpty()) {
            return out;
        }
        jdbc.sql("""
                        SELECT patient_id, engine_state, engine_resume, state_seq FROM patient_state
                         WHERE patient_id IN (:ids) AND engine_state IS NOT NULL
                        """)
                .param("ids", patientIds)
                .query((rs, n) -> {
                    String resume = rs.getString("engine_resume");
                    return out.put(
                            rs.getString("patient_id"),
                            new Stored(
                                    read(rs.getString("engine_state"), EngineState.class),
                                    resume == null ? null : read(resume, Resumable.class),
                                    rs.getLong("state_seq")));
                })
                .list();
        return out;
    }

    /** One patient's state to save at the end of a batch. */
    record Save(String patientId, Resumable resumable, Instant latestClinical, long expectedSeq) {}

    /** Saves several patients' states in one JDBC batch; each sequence moves to {@code expectedSeq + 1}. */
    void saveAll(List<Save> saves) {
        if (saves.isEmpty()) {
            return;
        }
        Timestamp now = Timestamp.from(clock.instant());
        named.batchUpdate(
                """
                UPDATE patient_state SET engine_state = :state, engine_resume = :resume, state_seq = :next,
                       latest_clinical = :latest, updated_at = :now
                 WHERE patient_id = :p
                """,
                saves.stream()
                        .map(s -> new MapSqlParameterSource()
                                .addValue("state", write(s.resumable().current()))
                                .addValue("resume", write(s.resumable()))
                                .addValue("next", s.expectedSeq() + 1)
                                .addValue(
                                        "latest",
                                        s.latestClinical() == null ? null : Timestamp.from(s.latestClinical()))
                                .addValue("now", now)
                                .addValue("p", s.patientId()))
                        .toArray(MapSqlParameterSource[]::new));
    }

    /** The order in which a batch takes its patients' locks. */
    static List<String> lockOrder(Collection<String> patientIds) {
        List<String> ordered = new ArrayList<>(new java.util.LinkedHashSet<>(patientIds));
        ordered.sort(Comparator.comparingLong(PatientStateStore::lockKey).thenComparing(Comparator.naturalOrder()));
        return ordered;
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
