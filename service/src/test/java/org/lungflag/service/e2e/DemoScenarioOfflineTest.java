package org.lungflag.service.e2e;

import static org.assertj.core.api.Assertions.assertThat;

import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;
import org.lungflag.rules.engine.EpisodeStatus;
import org.lungflag.rules.engine.RuleEvaluation;
import org.lungflag.rules.measure.ClinicalFact;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.UnitRepair;
import org.lungflag.sandbox.scenario.DemoScenario;
import org.lungflag.service.normalize.NormalizedResource;
import org.lungflag.service.offline.PatientRun;
import org.lungflag.service.testsupport.DemoScenarioOffline;

/**
 * The demo scenario through the real pipeline without a server (the same normalizer, engine and rule catalog as the
 * live service and replay): the advisories, not-evaluable reasons and unit repairs are those its design expects.
 * Fast, so a change to the scenario or the catalog that breaks the demo shows here first.
 */
class DemoScenarioOfflineTest {

    @Test
    void theEngineRaisesWhatTheScenarioDesignExpects() throws Exception {
        DemoScenarioOffline demo = DemoScenarioOffline.load();
        DemoScenario scenario = demo.scenario();
        // every scenario Observation maps: the data-quality cases are in the values, not in broken resources
        assertThat(demo.refused()).isEmpty();

        List<DemoScenarioChecks.Evaluation> evaluations = new ArrayList<>();
        List<DemoScenarioChecks.Episode> episodes = new ArrayList<>();
        List<DemoScenarioChecks.Repair> repairs = new ArrayList<>();
        for (Map.Entry<String, List<NormalizedResource>> e : demo.byPatient().entrySet()) {
            PatientRun run = demo.run(e.getKey());
            for (RuleEvaluation v : run.evaluations()) {
                evaluations.add(new DemoScenarioChecks.Evaluation(
                        v.patientId(),
                        v.ruleId(),
                        v.outcome().name(),
                        v.tier(),
                        v.reason() == null ? null : v.reason().code(),
                        hours(scenario, v.at())));
            }
            for (org.lungflag.rules.engine.Episode ep : run.episodes()) {
                episodes.add(new DemoScenarioChecks.Episode(
                        ep.patientId(),
                        ep.ruleId(),
                        hours(scenario, ep.start()),
                        ep.tier(),
                        ep.status() == EpisodeStatus.ACTIVE,
                        ep.end() == null ? null : hours(scenario, ep.end()),
                        ep.tierHistory().stream()
                                .map(t -> new DemoScenarioChecks.TierAt(t.tier(), hours(scenario, t.at())))
                                .toList()));
            }
            for (NormalizedResource r : e.getValue()) {
                for (ClinicalFact f : r.facts()) {
                    if (f instanceof Measurement m) {
                        for (UnitRepair repair : m.repairs()) {
                            repairs.add(new DemoScenarioChecks.Repair(
                                    e.getKey(), repair.code(), hours(scenario, m.time())));
                        }
                    }
                }
            }
        }
        episodes.forEach(ep -> System.out.println(
                "episode " + ep.patient() + " " + ep.rule() + ": " + DemoScenarioChecks.describe(ep)));
        List<String> problems = DemoScenarioChecks.mismatches(scenario.expectations(), evaluations, episodes, repairs);
        assertThat(problems).as("the engine against expected-advisories.csv").isEmpty();
    }

    private static double hours(DemoScenario scenario, Instant at) {
        return Duration.between(scenario.nominalStart(), at).toSeconds() / 3600.0;
    }
}
