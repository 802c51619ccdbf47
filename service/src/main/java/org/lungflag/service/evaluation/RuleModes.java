package org.lungflag.service.evaluation;

import java.sql.Timestamp;
import java.time.Clock;
import java.util.HashMap;
import java.util.Map;
import java.util.Optional;
import org.lungflag.service.writeback.WritebackMode;
import org.lungflag.service.writeback.WritebackProperties;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.stereotype.Component;
import org.springframework.transaction.annotation.Transactional;

/**
 * Whether a rule runs silent (evaluated and audited, nothing written to the record) or active. The configured
 * default ({@code lungflag.writeback.mode}, {@code lungflag.writeback.silent-rules}) can be overridden per rule at
 * run time by an admin; the override is stored, so every instance sees it.
 */
@Component
public class RuleModes {

    private final JdbcClient jdbc;
    private final WritebackProperties properties;
    private final Clock clock;

    RuleModes(JdbcClient jdbc, WritebackProperties properties, Clock clock) {
        this.jdbc = jdbc;
        this.properties = properties;
        this.clock = clock;
    }

    /** The mode now in force for a rule. A global silent mode wins over any per-rule switch. */
    public EvaluationMode mode(String ruleId) {
        if (properties.mode() == WritebackMode.SILENT) {
            return EvaluationMode.SILENT;
        }
        return override(ruleId).orElse(configured(ruleId));
    }

    /**
     * Every rule's mode as it stands now, read with one query: the inbox processor takes one per batch, so a switch by
     * an admin applies from the next batch on and a batch never mixes two modes of one rule.
     */
    public Snapshot snapshot() {
        return new Snapshot(properties.mode() == WritebackMode.SILENT ? Map.of() : overrides());
    }

    /** The modes in force when a {@link #snapshot()} was taken. */
    public final class Snapshot {
        private final Map<String, EvaluationMode> overrides;

        private Snapshot(Map<String, EvaluationMode> overrides) {
            this.overrides = overrides;
        }

        public EvaluationMode mode(String ruleId) {
            if (properties.mode() == WritebackMode.SILENT) {
                return EvaluationMode.SILENT;
            }
            EvaluationMode override = overrides.get(ruleId);
            return override != null ? override : configured(ruleId);
        }
    }

    private EvaluationMode configured(String ruleId) {
        return properties.silentRules().contains(ruleId) ? EvaluationMode.SILENT : EvaluationMode.ACTIVE;
    }

    /** Every stored per-rule switch. */
    public Map<String, EvaluationMode> overrides() {
        Map<String, EvaluationMode> out = new HashMap<>();
        jdbc.sql("SELECT rule_id, mode FROM rule_mode")
                .query((rs, n) -> out.put(rs.getString(1), EvaluationMode.valueOf(rs.getString(2))))
                .list();
        return out;
    }

    public Optional<EvaluationMode> override(String ruleId) {
        return jdbc.sql("SELECT mode FROM rule_mode WHERE rule_id = :id")
                .param("id", ruleId)
                .query(String.class)
                .optional()
                .map(EvaluationMode::valueOf);
    }

    /** Switches a rule; {@code changedBy} is the admin's user name, kept for the audit. */
    @Transactional
    public void set(String ruleId, EvaluationMode mode, String changedBy) {
        Timestamp now = Timestamp.from(clock.instant());
        int updated = jdbc.sql(
                        "UPDATE rule_mode SET mode = :mode, changed_by = :by, changed_at = :now WHERE rule_id = :id")
                .param("mode", mode.name())
                .param("by", changedBy)
                .param("now", now)
                .param("id", ruleId)
                .update();
        if (updated == 0) {
            jdbc.sql("INSERT INTO rule_mode (rule_id, mode, changed_by, changed_at) VALUES (:id, :mode, :by, :now)")
                    .param("id", ruleId)
                    .param("mode", mode.name())
                    .param("by", changedBy)
                    .param("now", now)
                    .update();
        }
    }

    public boolean indicesWritten() {
        return properties.mode() == WritebackMode.FLAGS_AND_INDICES;
    }
}
