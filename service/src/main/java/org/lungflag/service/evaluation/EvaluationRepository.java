package org.lungflag.service.evaluation;

import com.fasterxml.jackson.core.JsonProcessingException;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.sql.Timestamp;
import java.time.Clock;
import java.time.Instant;
import org.lungflag.rules.engine.RuleEvaluation;
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
    private final ObjectMapper json;
    private final Clock clock;

    EvaluationRepository(JdbcClient jdbc, ObjectMapper json, Clock clock) {
        this.jdbc = jdbc;
        this.json = json;
        this.clock = clock;
    }

    long add(RuleEvaluation e, EvaluationMode mode) {
        GeneratedKeyHolder keys = new GeneratedKeyHolder();
        jdbc.sql("""
                        INSERT INTO evaluation (patient_id, rule_id, rule_version, rule_digest, anchor_time, evaluated_at,
                                                outcome, tier_code, reason_code, detail, episode_key, mode, explanation)
                        VALUES (:patient, :rule, :version, :digest, :at, :now, :outcome, :tier, :reason, :detail,
                                :episode, :mode, :explanation)
                        """)
                .param("patient", e.patientId())
                .param("rule", e.ruleId())
                .param("version", e.ruleVersion())
                .param("digest", e.ruleDigest())
                .param("at", Timestamp.from(e.at()))
                .param("now", Timestamp.from(clock.instant()))
                .param("outcome", e.outcome().name())
                .param("tier", e.tier())
                .param("reason", e.reason() == null ? null : e.reason().code())
                .param("detail", e.detail())
                .param("episode", e.episode() == null ? null : e.episode().key())
                .param("mode", mode.name())
                .param("explanation", write(e))
                .update(keys, "id");
        return keys.getKeyAs(Number.class).longValue();
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
