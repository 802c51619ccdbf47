package org.lungflag.rules.engine;

import static org.assertj.core.api.Assertions.assertThat;

import java.time.Instant;
import java.time.LocalDate;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.lungflag.rules.catalog.Cautions;
import org.lungflag.rules.catalog.ParameterOverrides;
import org.lungflag.rules.catalog.RuleCatalog;
import org.lungflag.rules.index.IndexCode;
import org.lungflag.rules.measure.ClinicalFact;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.OriginalQuantity;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.SupportMode;
import org.lungflag.rules.measure.SupportState;
import org.lungflag.rules.measure.ValueRole;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.patient.Sex;
import org.lungflag.rules.timeline.PatientTimeline;

/**
 * The whole explanation of one evaluation, text for text, on the published worked value clinical-reference T11 / 2C
 * (PaO2 80 mmHg, FiO2 0.50: P/F 160.0, moderate band of Berlin 2012). Pins what the faster rendering must keep:
 * the basis and advisory sentences as the catalog's templates make them, the caution, which measurements and
 * index were used and in which order.
 */
class WorkedExampleExplanationTest {

    private static final Instant DAY = Instant.parse("2026-03-01T00:00:00Z");

    @Test
    void t11ExplanationIsRenderedExactly() {
        RuleEngine engine = RuleEngine.create(RuleCatalog.loadDefault(), ParameterOverrides.none());
        PatientFacts patient = new PatientFacts("t11", Sex.MALE, LocalDate.of(1966, 1, 1));
        PatientEvaluator ev = PatientEvaluator.start(engine, new PatientTimeline("t11"), patient);
        SourceRef support = SourceRef.observation("a-support", "1");
        SourceRef fio2 = SourceRef.observation("b-fio2", "1");
        SourceRef peep = SourceRef.observation("c-peep", "2");
        SourceRef pao2 = SourceRef.observation("d-pao2", "1");
        List<RuleEvaluation> out = new ArrayList<>();
        for (ClinicalFact f : List.of(
                new SupportState(SupportMode.INVASIVE_VENTILATION, null, DAY, support),
                m(QuantityKind.FIO2, 0.50, "02:40", ValueRole.SETTING, SpecimenKind.NOT_APPLICABLE, fio2),
                m(QuantityKind.PEEP, 8, "02:40", ValueRole.SETTING, SpecimenKind.NOT_APPLICABLE, peep),
                m(QuantityKind.PAO2, 80, "03:10", ValueRole.MEASUREMENT, SpecimenKind.ARTERIAL, pao2))) {
            out.addAll(ev.offer(f).evaluations());
        }
        RuleEvaluation e = out.stream()
                .filter(x -> x.ruleId().equals("hypoxemia") && x.at().equals(at("03:10")))
                .reduce((a, b) -> b)
                .orElseThrow();
        assertThat(e.outcome()).isEqualTo(Outcome.ONSET);
        assertThat(e.tier()).isEqualTo("hypoxemia-moderate");
        Explanation x = e.explanation();
        // the catalog's basis templates with the worked values (P/F 160.0 rounds to 160 with {pf_ratio|0})
        assertThat(x.basisText())
                .isEqualTo("Berlin 2012 band by P/F 160 mmHg (PaO2 80 mmHg at 03:10, FiO2 0.50 set at 02:40),"
                        + " PEEP 8 cmH2O");
        assertThat(x.advisoryText())
                .isEqualTo("Oxygenation in the moderate hypoxemia band of a published definition of hypoxemic"
                        + " respiratory failure. This describes oxygenation only; it is not a diagnosis (the"
                        + " definitions also need timing, imaging and exclusion of a cardiac cause, which are not"
                        + " assessed).");
        assertThat(x.cautionText())
                .isEqualTo(Cautions.GENERAL + " P/F and S/F depend on FiO2 and PEEP, and the two can disagree; an"
                        + " arterial blood gas takes precedence over S/F for a few hours.");
        assertThat(x.measurements())
                .extracting(UsedMeasurement::source)
                .containsExactly(fio2, peep, pao2); // by time, then by reference
        assertThat(x.indices()).singleElement().satisfies(i -> {
            assertThat(i.code()).isEqualTo(IndexCode.PF_RATIO);
            assertThat(i.value()).isEqualTo(160.0, org.assertj.core.data.Offset.offset(1e-9));
            assertThat(i.inputs()).containsExactly(pao2, fio2);
        });
        assertThat(x.parameters())
                .containsEntry("pf_moderate_max", "200 mm[Hg]")
                .containsEntry("resolve_after", "6 h");
    }

    private static Instant at(String hhmm) {
        return DAY.plusSeconds(
                Integer.parseInt(hhmm.substring(0, 2)) * 3600L + Integer.parseInt(hhmm.substring(3)) * 60L);
    }

    private static Measurement m(
            QuantityKind kind, double value, String hhmm, ValueRole role, SpecimenKind sk, SourceRef src) {
        return new Measurement(
                kind, value, at(hhmm), role, sk, src, new OriginalQuantity(value, kind.canonicalUnit()), List.of());
    }
}
