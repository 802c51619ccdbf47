package org.lungflag.rules.engine;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import java.lang.reflect.ParameterizedType;
import java.lang.reflect.RecordComponent;
import java.lang.reflect.Type;
import java.time.Instant;
import java.time.LocalDate;
import java.util.List;
import java.util.Set;
import org.junit.jupiter.api.Test;
import org.lungflag.rules.catalog.ParameterOverrides;
import org.lungflag.rules.catalog.RuleCatalog;
import org.lungflag.rules.measure.ClinicalFact;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SupportMode;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.patient.Sex;
import org.lungflag.rules.timeline.AddResult;
import org.lungflag.rules.timeline.PatientTimeline;

/** The per-patient evaluator: late data, redeliveries, time passing and resuming after a restart. */
class PatientEvaluatorTest {

    static final RuleEngine ENGINE = RuleEngine.create(RuleCatalog.loadDefault(), ParameterOverrides.none());
    static final PatientFacts PATIENT = new PatientFacts("pat-eval", Sex.MALE, LocalDate.parse("1964-07-01"));

    final Facts f = new Facts("ev");

    PatientEvaluator evaluator() {
        return PatientEvaluator.start(ENGINE, new PatientTimeline(PATIENT.patientId()), PATIENT);
    }

    static RuleEvaluation hypoxemia(List<RuleEvaluation> evaluations, Instant at) {
        return evaluations.stream()
                .filter(e -> e.ruleId().equals("hypoxemia") && e.at().equals(at))
                .findFirst()
                .orElseThrow();
    }

    @Test
    void a_late_fio2_charted_before_the_blood_gas_re_runs_it_and_supersedes_the_earlier_result() {
        PatientEvaluator ev = evaluator();
        ev.offer(f.support(SupportMode.INVASIVE_VENTILATION, Facts.at(0, 0)));
        ev.offer(f.setting(QuantityKind.PEEP, 8, Facts.at(2, 40)));
        ev.offer(f.setting(QuantityKind.FIO2, 0.50, Facts.at(2, 30)));
        PatientEvaluator.Batch first = ev.offer(f.measured(QuantityKind.PAO2, 80, Facts.at(3, 10)));
        assertThat(hypoxemia(first.evaluations(), Facts.at(3, 10)).tier()).isEqualTo("hypoxemia-moderate");

        // the FiO2 actually in force (charted later, effective at 02:40) was 0.9: P/F 89, severe
        PatientEvaluator.Batch late = ev.offer(f.setting(QuantityKind.FIO2, 0.90, Facts.at(2, 40)));
        assertThat(late.supersedesAfter()).isBefore(Facts.at(3, 10));
        RuleEvaluation redone = hypoxemia(late.evaluations(), Facts.at(3, 10));
        assertThat(redone.outcome()).isEqualTo(Outcome.ONSET);
        assertThat(redone.tier()).isEqualTo("hypoxemia-severe");
        assertThat(ev.activeEpisodes())
                .singleElement()
                .satisfies(e -> assertThat(e.tier()).isEqualTo("hypoxemia-severe"));
    }

    @Test
    void a_redelivered_resource_changes_nothing() {
        PatientEvaluator ev = evaluator();
        ev.offer(f.support(SupportMode.INVASIVE_VENTILATION, Facts.at(0, 0)));
        ev.offer(f.setting(QuantityKind.FIO2, 0.50, Facts.at(2, 40)));
        ev.offer(f.setting(QuantityKind.PEEP, 8, Facts.at(2, 40)));
        ClinicalFact gas = f.measured(QuantityKind.PAO2, 80, Facts.at(3, 10));
        ev.offer(gas);
        EngineState before = ev.state();
        PatientEvaluator.Batch again = ev.offer(gas);
        assertThat(again.added()).isEqualTo(AddResult.DUPLICATE);
        assertThat(again.evaluations()).isEmpty();
        assertThat(ev.state()).isEqualTo(before);
    }

    @Test
    void time_passing_ends_an_episode_at_its_deadline_whenever_the_clock_is_advanced() {
        PatientEvaluator ev = evaluator();
        ev.offer(f.support(SupportMode.INVASIVE_VENTILATION, Facts.at(0, 0)));
        ev.offer(f.setting(QuantityKind.FIO2, 0.50, Facts.at(2, 40)));
        ev.offer(f.setting(QuantityKind.PEEP, 8, Facts.at(2, 40)));
        ev.offer(f.measured(QuantityKind.PAO2, 80, Facts.at(3, 10)));
        assertThat(ev.advanceTo(Facts.at(20, 0)).evaluations()).isEmpty();
        PatientEvaluator.Batch b = ev.advanceTo(Facts.at(40, 0));
        assertThat(b.evaluations()).singleElement().satisfies(e -> {
            assertThat(e.outcome()).isEqualTo(Outcome.EXPIRED);
            assertThat(e.at()).isEqualTo(Facts.at(27, 10));
            assertThat(e.episode().end()).isEqualTo(Facts.at(27, 10));
        });
        assertThat(ev.advanceTo(Facts.at(41, 0)).evaluations()).isEmpty();
    }

    @Test
    void resuming_from_a_persisted_state_continues_the_active_episode_and_starts_no_second_one() {
        PatientEvaluator before = evaluator();
        List<ClinicalFact> history = List.of(
                f.support(SupportMode.INVASIVE_VENTILATION, Facts.at(0, 0)),
                f.setting(QuantityKind.FIO2, 0.50, Facts.at(2, 40)),
                f.setting(QuantityKind.PEEP, 8, Facts.at(2, 40)),
                f.measured(QuantityKind.PAO2, 80, Facts.at(3, 10)));
        history.forEach(before::offer);
        EngineState persisted = before.state();
        String key = persisted.activeEpisodes().get(0).key();

        // after a restart: the timeline is re-hydrated from the record, the state from the store
        PatientTimeline rehydrated = new PatientTimeline(PATIENT.patientId());
        history.forEach(rehydrated::add);
        PatientEvaluator after = PatientEvaluator.resume(ENGINE, rehydrated, PATIENT, persisted);
        assertThat(after.catchUp().evaluations()).isEmpty();
        after.offer(f.setting(QuantityKind.FIO2, 0.50, Facts.at(6, 40)));
        after.offer(f.setting(QuantityKind.PEEP, 8, Facts.at(6, 40)));
        PatientEvaluator.Batch b = after.offer(f.measured(QuantityKind.PAO2, 85, Facts.at(7, 10)));

        RuleEvaluation next = hypoxemia(b.evaluations(), Facts.at(7, 10));
        assertThat(next.outcome()).isEqualTo(Outcome.ONGOING);
        assertThat(next.episode().key()).isEqualTo(key);
    }

    @Test
    void every_evaluation_carries_rule_version_digest_and_versioned_sources() {
        PatientEvaluator ev = evaluator();
        ev.offer(f.support(SupportMode.INVASIVE_VENTILATION, Facts.at(0, 0)));
        ev.offer(f.setting(QuantityKind.FIO2, 0.50, Facts.at(2, 40)));
        ev.offer(f.setting(QuantityKind.PEEP, 8, Facts.at(2, 40)));
        RuleEvaluation e = hypoxemia(
                ev.offer(f.measured(QuantityKind.PAO2, 80, Facts.at(3, 10))).evaluations(), Facts.at(3, 10));
        assertThat(e.ruleVersion()).isEqualTo("1.0.0");
        assertThat(e.ruleDigest()).startsWith("sha256:");
        assertThat(e.explanation().measurements())
                .extracting(m -> m.kind())
                .contains(QuantityKind.PAO2, QuantityKind.FIO2, QuantityKind.PEEP);
        assertThat(e.explanation().measurements())
                .allSatisfy(m -> assertThat(m.source().version()).isEqualTo("1"));
        assertThat(e.explanation().indices()).singleElement().satisfies(i -> {
            assertThat(i.formula().id()).isEqualTo("pf-ratio");
            assertThat(i.value()).isEqualTo(160.0);
        });
        assertThat(e.explanation().parameters()).containsEntry("pf_moderate_max", "200 mm[Hg]");
    }

    @Test
    void a_blood_gas_entered_in_error_is_retracted_and_its_episode_disappears() {
        PatientEvaluator ev = evaluator();
        ev.offer(f.support(SupportMode.INVASIVE_VENTILATION, Facts.at(0, 0)));
        ev.offer(f.setting(QuantityKind.FIO2, 0.50, Facts.at(2, 40)));
        ev.offer(f.setting(QuantityKind.PEEP, 8, Facts.at(2, 40)));
        ClinicalFact gas = f.measured(QuantityKind.PAO2, 80, Facts.at(3, 10));
        ev.offer(gas);
        assertThat(ev.activeEpisodes()).hasSize(1);

        PatientEvaluator.Batch b =
                ev.retract(gas.source().resourceType(), gas.source().id());
        assertThat(b.supersedesAfter()).isBefore(Facts.at(3, 10));
        assertThat(b.evaluations()).noneMatch(e -> e.at().equals(Facts.at(3, 10)));
        assertThat(ev.activeEpisodes()).isEmpty();
    }

    @Test
    void a_corrected_birth_date_re_runs_with_the_other_age_group() {
        PatientEvaluator ev = evaluator();
        ev.offer(f.support(SupportMode.INVASIVE_VENTILATION, Facts.at(0, 0)));
        ev.offer(f.setting(QuantityKind.FIO2, 0.60, Facts.at(2, 40)));
        ev.offer(f.setting(QuantityKind.PEEP, 8, Facts.at(2, 40)));
        ev.offer(f.measured(QuantityKind.MEAN_AIRWAY_PRESSURE, 18, Facts.at(3, 0)));
        ev.offer(f.measured(QuantityKind.PAO2, 75, Facts.at(3, 10)));
        assertThat(ev.activeEpisodes()).extracting(Episode::ruleId).containsExactly("hypoxemia");

        PatientFacts child = new PatientFacts(PATIENT.patientId(), Sex.MALE, LocalDate.parse("2016-07-01"));
        PatientEvaluator.Batch b = ev.updatePatient(child);
        assertThat(b.supersedesAfter()).isEqualTo(Instant.MIN);
        assertThat(ev.activeEpisodes()).extracting(Episode::ruleId).containsExactly("pediatric-hypoxemia");
    }

    @Test
    void the_engine_refuses_evaluation_points_that_do_not_move_forward() {
        PatientTimeline t = new PatientTimeline(PATIENT.patientId());
        EngineState s = ENGINE.step(null, t, PATIENT, Facts.at(1, 0)).next();
        assertThatThrownBy(() -> ENGINE.step(s, t, PATIENT, Facts.at(1, 0)))
                .isInstanceOf(IllegalArgumentException.class)
                .hasMessageContaining("move forward");
    }

    @Test
    void the_engine_state_holds_only_plain_records_enums_texts_instants_and_numbers() {
        assertPlain(EngineState.class, new java.util.HashSet<>());
    }

    private static void assertPlain(Type type, Set<Type> seen) {
        if (!seen.add(type)) {
            return;
        }
        if (type instanceof ParameterizedType p) {
            assertThat(p.getRawType()).isEqualTo(List.class);
            assertPlain(p.getActualTypeArguments()[0], seen);
            return;
        }
        Class<?> c = (Class<?>) type;
        if (c.isPrimitive()
                || c == String.class
                || c == Instant.class
                || Number.class.isAssignableFrom(c)
                || c.isEnum()
                || c == Boolean.class) {
            return;
        }
        assertThat(c.isRecord()).as("%s is a record", c).isTrue();
        for (RecordComponent rc : c.getRecordComponents()) {
            assertPlain(rc.getGenericType(), seen);
        }
    }
}
