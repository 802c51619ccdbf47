package org.lungflag.rules.engine;

import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.Optional;

/**
 * Everything the engine remembers about one patient between evaluations: an immutable snapshot of plain records,
 * serializable as JSON (the service persists it to resume after a restart without starting a second episode).
 *
 * @param evaluatedUpTo the clinical time of the last evaluation point processed, or {@code null}
 * @param clock the clinical time the state has been advanced to (≥ {@code evaluatedUpTo}), or {@code null}
 * @param rules one state per rule, sorted by rule id
 */
public record EngineState(String patientId, Instant evaluatedUpTo, Instant clock, List<RuleState> rules) {

    public EngineState {
        rules = List.copyOf(rules);
    }

    public static EngineState initial(String patientId) {
        return new EngineState(patientId, null, null, List.of());
    }

    public Optional<RuleState> rule(String ruleId) {
        for (RuleState r : rules) {
            if (r.ruleId().equals(ruleId)) {
                return Optional.of(r);
            }
        }
        return Optional.empty();
    }

    /** Active episodes, by rule id. */
    public List<Episode> activeEpisodes() {
        List<Episode> out = new ArrayList<>();
        for (RuleState r : rules) {
            if (r.episode() != null) {
                out.add(r.episode());
            }
        }
        return out;
    }
}
