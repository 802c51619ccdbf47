package org.lungflag.rules.engine;

import java.util.List;

/** The engine's answer to one step: the next state and the evaluations made, in clinical order. */
public record StepResult(EngineState next, List<RuleEvaluation> evaluations) {

    public StepResult {
        evaluations = List.copyOf(evaluations);
    }
}
