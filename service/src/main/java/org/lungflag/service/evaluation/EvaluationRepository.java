package org.lungflag.service.evaluation;

import com.fasterxml.jackson.core.JsonProcessingException;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.sql.Timestamp;
import java.time.Clock;
import java.time.Instant;
import java.util.List;
import java.util.Map;
import org.lungflag.rules.engine.RuleEvaluation;
import org.springframework.jdbc.core.namedparam.MapSqlParameterSource;
import org.springframework.jdbc.core.namedparam.NamedParameterJdbcTemplate;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.jdbc.support.GeneratedKeyHolder;
import org.springframework.stereotype.Repository;

/**
 * Every rule evaluation, with its explanation (inputs with id + version and converted values, index values with
 * formula versions, parameters, texts) as JSON: an advisory can be explained from here alone (invariant 5).
 * Re-evaluations after late data mark the earlier rows superseded rather than deleting them.
 */
@Repository
class EvaluationRepository {

    private final JdbcClient jdbc;
    private final NamedParameterJdbcTemplate named;
    private final ObjectMapper json;
    private final Clock clock;

    EvaluationRepository(JdbcClient jdbc, NamedParameterJdbcTemplate named, ObjectMapper json, Clock clock) {
        this.jdbc = jdbc;
        this.named = named;
        this.json = json;
        this.clock = clock;
    }

    private static final String INSERT = """
            INSERT INTO evaluation (patient_id, rule_id, rule_version, rule_digest, anchor_time, evaluated_at,
                                    outcome, tier_code, reason_code, detail, episode_key, mode, explanation)
            VALUES (:patient, :rule, :version, :digest, :at, :now, :outcome, :tier, :reason, :detail,
                    :episode, :mode, :explanation)
            """;

    /**
     * Inserts evaluations in one JDBC batch, in order, and returns their ids in the same order.
     *
     * @param modes the mode each evaluation ran in, index for index
     */
    long[] addAll(List<RuleEvaluation> evaluations, List<EvaluationMode> modes) {
        if (evaluations.isEmpty()) {
            return new long[0];
        }
        Timestamp now = Timestamp.from(clock.instant());
        MapSqlParameterSource[] rows = new MapSqlParameterSource[evaluations.size()];
        for (int i = 0; i < rows.length; i++) {
            RuleEvaluation e = evaluations.get(i);
            rows[i] = new MapSqlParameterSource()
                    .addValue("patient", e.patientId())
                    .addValue("rule", e.ruleId())
                    .addValue("version", e.ruleVersion())
                    .addValue("digest", e.ruleDigest())
                    .addValue("at", Timestamp.from(e.at()))
                    .addValue("now", now)
                    .addValue("outcome", e.outcome().name())
                    .addValue("tier", e.tier())
                    .addValue("reason", e.reason() == null ? null : e.reason().code())
                    .addValue("detail", e.detail())
                    .addValue(
                            "episode", e.episode() == null ? null : e.episode().key())
                    .addValue("mode", modes.get(i).name())
                    .addValue("explanation", write(e));
        }
        GeneratedKeyHolder keys = new GeneratedKeyHolder();
        named.batchUpdate(INSERT, rows, keys, new String[] {"id"});
        List<Map<String, Object>> generated = keys.getKeyList();
        if (generated.size() != rows.length) {
            throw new IllegalStateException(
                    "the database returned " + generated.size() + " ids for " + rows.length + " evaluations");
        }
        long[] ids = new long[rows.length];
        for (int i = 0; i < ids.length; i++) {
            ids[i] = ((Number) generated.get(i).values().iterator().next()).longValue();
        }
        return ids;
    }

    /** Marks the patient's evaluations after {@code after} superseded by a re-evaluation. */
    int supersedeAfter(String patientId, Instant after) {
        if (after.equals(Instant.MIN)) {
            return jdbc.sql("UPDATE evaluation SET superseded = TRUE WHERE patient_id = :p AND NOT superseded")
                    .param("p", patientId)
                    .update();
        }
        return jdbc.sql(
                        "UPDATE evaluation SET superseded = TRUE WHERE patient_id = :p AND anchor_time > :after AND NOT superseded")
                .param("p", patientId)
                .param("after", Timestamp.from(after))
                .update();
    }

    private String write(RuleEvaluation e) {
        try {
            return json.writeValueAsString(e.explanation());
        } catch (JsonProcessingException ex) {
            throw new IllegalStateException("cannot encode an explanation", ex);
        }
    }
}
