package org.lungflag.rules.engine;

import static org.assertj.core.api.Assertions.assertThat;

import java.util.ArrayList;
import java.util.Collections;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.Random;
import net.jqwik.api.ForAll;
import net.jqwik.api.Property;
import net.jqwik.api.constraints.IntRange;
import net.jqwik.api.constraints.LongRange;
import org.lungflag.rules.catalog.ParameterOverrides;
import org.lungflag.rules.catalog.RuleCatalog;
import org.lungflag.rules.measure.ClinicalFact;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.patient.Sex;
import org.lungflag.rules.timeline.PatientTimeline;

/**
 * Design invariants 2 and 3: the evaluations and episodes after a set of facts are the same whatever order they
 * arrived in (late data and redeliveries included), and one rule never has two active episodes for one patient.
 */
class ArrivalOrderProperties {

    static final RuleEngine ENGINE = RuleEngine.create(RuleCatalog.loadDefault(), ParameterOverrides.none());
    static final PatientFacts PATIENT =
            new PatientFacts("pat-order", Sex.FEMALE, java.time.LocalDate.parse("1961-05-02"));

    /** What must not depend on arrival: rule, time, outcome, tier, reason, episode key and basis. */
    record Row(
            String rule, java.time.Instant at, Outcome outcome, String tier, String reason, String key, String basis) {
        static Row of(RuleEvaluation e) {
            return new Row(
                    e.ruleId(),
                    e.at(),
                    e.outcome(),
                    e.tier(),
                    e.reason() == null ? null : e.reason().code(),
                    e.episode() == null ? null : e.episode().key(),
                    e.explanation().basisText());
        }
    }

    static List<Row> run(List<ClinicalFact> arrival) {
        PatientEvaluator ev = PatientEvaluator.start(ENGINE, new PatientTimeline(PATIENT.patientId()), PATIENT);
        CaseRunner.Log log = new CaseRunner.Log();
        for (ClinicalFact f : arrival) {
            log.apply(ev.offer(f));
        }
        log.apply(ev.advanceTo(Facts.at(60, 0)));
        List<Row> rows = new ArrayList<>();
        for (RuleEvaluation e : log.entries()) {
            rows.add(Row.of(e));
        }
        rows.sort(java.util.Comparator.comparing(Row::at).thenComparing(Row::rule));
        return rows;
    }

    @Property(tries = 40)
    void arrival_order_late_data_and_redeliveries_do_not_change_outcomes_or_episodes(
            @ForAll @LongRange(min = 1, max = 1_000_000) long scenario,
            @ForAll @LongRange(min = 1, max = 1_000_000) long shuffle,
            @ForAll @IntRange(min = 0, max = 20) int redeliveries) {
        List<ClinicalFact> facts = Facts.ventilatedDay(scenario, 20);
        List<Row> inOrder = run(facts);

        List<ClinicalFact> arrival = new ArrayList<>(facts);
        Random r = new Random(shuffle);
        // mostly in order with local disorder and some very late facts, like a real feed
        for (int i = 0; i < arrival.size(); i++) {
            int j = Math.min(arrival.size() - 1, i + r.nextInt(8));
            Collections.swap(arrival, i, j);
        }
        for (int k = 0; k < 5; k++) {
            arrival.add(arrival.remove(r.nextInt(arrival.size() / 2)));
        }
        for (int k = 0; k < redeliveries; k++) {
            arrival.add(r.nextInt(arrival.size()), facts.get(r.nextInt(facts.size())));
        }
        assertThat(run(arrival)).isEqualTo(inOrder);
    }

    /**
     * What the service does when several instances share a patient, or after a restart: the evaluator is rebuilt
     * from what was persisted before each fact. Resuming from {@link PatientEvaluator.Resumable} must change
     * nothing, late data included (a resume from the engine state alone cannot re-run points before it).
     */
    @Property(tries = 25)
    void an_evaluator_resumed_from_its_persisted_form_before_every_fact_gives_the_same_outcomes(
            @ForAll @LongRange(min = 1, max = 1_000_000) long scenario,
            @ForAll @LongRange(min = 1, max = 1_000_000) long shuffle) {
        List<ClinicalFact> facts = Facts.ventilatedDay(scenario, 20);
        List<Row> inOrder = run(facts);

        List<ClinicalFact> arrival = new ArrayList<>(facts);
        Random r = new Random(shuffle);
        for (int i = 0; i < arrival.size(); i++) {
            Collections.swap(arrival, i, Math.min(arrival.size() - 1, i + r.nextInt(8)));
        }
        PatientEvaluator ev = PatientEvaluator.start(ENGINE, new PatientTimeline(PATIENT.patientId()), PATIENT);
        CaseRunner.Log log = new CaseRunner.Log();
        for (ClinicalFact f : arrival) {
            ev = PatientEvaluator.resume(ENGINE, ev.timeline(), PATIENT, ev.resumable());
            log.apply(ev.offer(f));
        }
        ev = PatientEvaluator.resume(ENGINE, ev.timeline(), PATIENT, ev.resumable());
        log.apply(ev.advanceTo(Facts.at(60, 0)));
        List<Row> rows = new ArrayList<>();
        for (RuleEvaluation e : log.entries()) {
            rows.add(Row.of(e));
        }
        rows.sort(java.util.Comparator.comparing(Row::at).thenComparing(Row::rule));
        assertThat(rows).isEqualTo(inOrder);
    }

    @Property(tries = 40)
    void one_rule_never_has_two_active_episodes_for_one_patient(
            @ForAll @LongRange(min = 1, max = 1_000_000) long scenario) {
        Map<String, String> active = new HashMap<>();
        for (Row row : run(Facts.ventilatedDay(scenario, 30))) {
            if (row.outcome() == Outcome.ONSET) {
                assertThat(active.get(row.rule()))
                        .as("%s already active at %s", row.rule(), row.at())
                        .isNull();
                active.put(row.rule(), row.key());
            } else if (row.outcome() == Outcome.RESOLVED || row.outcome() == Outcome.EXPIRED) {
                assertThat(active.remove(row.rule())).isEqualTo(row.key());
            } else if (row.outcome().isActiveTier()) {
                assertThat(row.key()).isEqualTo(active.get(row.rule()));
            }
        }
    }
}
