package org.lungflag.rules.engine;

import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.TreeMap;
import org.lungflag.rules.measure.ClinicalFact;
import org.lungflag.rules.timeline.PatientTimeline;

/**
 * Runs one case of a rule's tests.yaml through the real engine (the default catalog with the real index
 * calculator) by offering its facts in the given order, and keeps the evaluation log as a consumer would: a batch
 * that supersedes earlier evaluations replaces them.
 */
final class CaseRunner {

    /** The final log and evaluator after a run. */
    record Run(List<RuleEvaluation> log, PatientEvaluator evaluator, List<Episode> episodes) {

        List<RuleEvaluation> forRule(String ruleId) {
            return log.stream().filter(e -> e.ruleId().equals(ruleId)).toList();
        }

        List<Episode> episodesForRule(String ruleId) {
            return episodes.stream().filter(e -> e.ruleId().equals(ruleId)).toList();
        }
    }

    private CaseRunner() {}

    static Run run(RuleEngine engine, RuleCases.Case c, List<ClinicalFact> order) {
        PatientEvaluator ev =
                PatientEvaluator.start(engine, new PatientTimeline(c.patient().patientId()), c.patient());
        Log log = new Log();
        for (ClinicalFact f : order) {
            log.apply(ev.offer(f));
        }
        if (c.advanceTo() != null) {
            log.apply(ev.advanceTo(c.advanceTo()));
        }
        return log.finish(ev);
    }

    static Run run(RuleEngine engine, RuleCases.Case c) {
        return run(engine, c, c.facts().stream().map(RuleCases.Fact::fact).toList());
    }

    /** An evaluation log with the evaluator's supersede semantics. */
    static final class Log {
        private final List<RuleEvaluation> log = new ArrayList<>();

        void apply(PatientEvaluator.Batch b) {
            if (b.supersedesAfter() != null) {
                log.removeIf(e -> e.at().isAfter(b.supersedesAfter()));
            }
            log.addAll(b.evaluations());
        }

        List<RuleEvaluation> entries() {
            return log;
        }

        Run finish(PatientEvaluator ev) {
            // every episode seen, in its last state, keyed by its stable key
            Map<String, Episode> episodes = new TreeMap<>();
            for (RuleEvaluation e : log) {
                if (e.episode() != null) {
                    episodes.put(e.episode().key(), e.episode());
                }
            }
            List<Episode> list = new ArrayList<>(episodes.values());
            list.sort(java.util.Comparator.comparing(Episode::start).thenComparing(Episode::ruleId));
            return new Run(List.copyOf(log), ev, list);
        }
    }
}
