package org.lungflag.rules.engine;

import java.time.Instant;
import java.util.List;

/**
 * One rule's state for one patient between evaluations. Plain values only, so the service can persist it as JSON.
 *
 * @param episode the active episode, or {@code null}
 * @param lastMetAt the last evaluation at which a tier was met
 * @param lastEvaluableAt the last evaluation that was evaluable (a tier met or not met)
 * @param notMetSince the first evaluation with no tier met after {@code lastMetAt}, or {@code null}
 * @param runStart start of the current run of evaluations with a tier met (for onset qualifiers), or {@code null}
 * @param runCount readings counted in the current run (consecutive-readings qualifier)
 * @param runLastCounted the last counted reading of the run
 * @param history index values at this rule's recent evaluations, oldest first (for window aggregates)
 */
public record RuleState(
        String ruleId,
        Episode episode,
        Instant lastMetAt,
        Instant lastEvaluableAt,
        Instant notMetSince,
        Instant runStart,
        int runCount,
        Instant runLastCounted,
        List<IndexSample> history) {

    public RuleState {
        history = history == null ? List.of() : List.copyOf(history);
    }

    static RuleState initial(String ruleId) {
        return new RuleState(ruleId, null, null, null, null, null, 0, null, List.of());
    }
}
