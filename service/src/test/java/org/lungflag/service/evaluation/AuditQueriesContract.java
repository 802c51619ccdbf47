package org.lungflag.service.evaluation;

import static org.assertj.core.api.Assertions.assertThat;

import java.time.Instant;
import java.time.LocalDate;
import java.time.temporal.ChronoUnit;
import java.util.List;
import java.util.UUID;
import org.junit.jupiter.api.Test;
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
import org.lungflag.rules.quality.DataQualityReason;
import org.lungflag.service.api.ApiRecords.AdvisoryFilter;
import org.lungflag.service.api.ApiRecords.EvaluationDetail;
import org.lungflag.service.api.ApiRecords.EvaluationFilter;
import org.lungflag.service.api.ApiRecords.QuarantineFilter;
import org.lungflag.service.api.AuditQueries;
import org.lungflag.service.api.RuleCatalogView;
import org.lungflag.service.api.StatisticsService;
import org.lungflag.service.audit.QuarantineRepository;
import org.lungflag.service.audit.QuarantineStage;
import org.lungflag.service.normalize.NormalizedResource;
import org.springframework.beans.factory.annotation.Autowired;

/**
 * The audit API's store queries on each supported database, over rows written by the real {@link PatientProcessor}:
 * filters, paging, explanations, quarantine, statistics and mode history. Clinical expectation: P/F = 80 / 0.50 =
 * 160, Berlin 2012 moderate band with PEEP 8 cmH2O (clinical-reference §2.2). Data invented.
 */
abstract class AuditQueriesContract {

    @Autowired
    PatientProcessor processor;

    @Autowired
    AuditQueries queries;

    @Autowired
    StatisticsService statistics;

    @Autowired
    RuleCatalogView catalog;

    @Autowired
    QuarantineRepository quarantine;

    private static Measurement m(
            QuantityKind kind, double value, String unit, Instant at, ValueRole role, SourceRef src) {
        SpecimenKind specimen = kind.isBloodSample() ? SpecimenKind.ARTERIAL : SpecimenKind.NOT_APPLICABLE;
        return new Measurement(kind, value, at, role, specimen, src, new OriginalQuantity(value, unit), List.of());
    }

    private static Work work(SourceRef src, Instant receivedAt, ClinicalFact fact) {
        return new Work(
                null, new NormalizedResource(src, null, List.of(fact), List.of(), false), "TEST", null, receivedAt);
    }

    /** A ventilated patient with a moderate-band blood gas at t0 (P/F 160); returns the patient id. */
    private String moderate(String prefix, Instant t0) {
        String p = prefix + "-" + UUID.randomUUID().toString().substring(0, 8);
        SourceRef support = SourceRef.observation(p + "-sup", "1");
        SourceRef fio2 = SourceRef.observation(p + "-fio2", "1");
        SourceRef peep = SourceRef.observation(p + "-peep", "1");
        SourceRef pao2 = SourceRef.observation(p + "-pao2", "1");
        processor.apply(
                p,
                new PatientFacts(p, Sex.FEMALE, LocalDate.of(1968, 3, 1)),
                List.of(
                        work(
                                support,
                                t0,
                                new SupportState(
                                        SupportMode.INVASIVE_VENTILATION,
                                        null,
                                        t0.minus(1, ChronoUnit.HOURS),
                                        support)),
                        work(
                                fio2,
                                t0,
                                m(
                                        QuantityKind.FIO2,
                                        0.5,
                                        "1",
                                        t0.minus(30, ChronoUnit.MINUTES),
                                        ValueRole.SETTING,
                                        fio2)),
                        work(
                                peep,
                                t0,
                                m(
                                        QuantityKind.PEEP,
                                        8,
                                        "cm[H2O]",
                                        t0.minus(30, ChronoUnit.MINUTES),
                                        ValueRole.SETTING,
                                        peep)),
                        work(pao2, t0, m(QuantityKind.PAO2, 80, "mm[Hg]", t0, ValueRole.MEASUREMENT, pao2))));
        return p;
    }

    private Instant t0() {
        // mid-day UTC so both the support record and the gas fall on one UTC day
        return Instant.now()
                .truncatedTo(ChronoUnit.DAYS)
                .minus(1, ChronoUnit.DAYS)
                .plus(12, ChronoUnit.HOURS);
    }

    @Test
    void advisoriesFilterByRuleCodeStatusPatientAndStartAndPage() {
        Instant t0 = t0();
        String a = moderate("q-a", t0);
        String b = moderate("q-b", t0.plus(10, ChronoUnit.MINUTES));
        assertThat(queries.advisories(new AdvisoryFilter(null, null, null, null, null, "Patient/" + a, 0, 0)))
                .singleElement()
                .satisfies(e -> {
                    assertThat(e.code()).isEqualTo("hypoxemia-moderate");
                    assertThat(e.status()).isEqualTo("ACTIVE");
                    assertThat(e.startedAt()).isEqualTo(t0);
                    assertThat(e.patient()).isEqualTo("Patient/" + a);
                });
        AdvisoryFilter both = new AdvisoryFilter(
                "hypoxemia", "hypoxemia-moderate", "active", t0, t0.plus(11, ChronoUnit.MINUTES), null, 0, 0);
        assertThat(queries.advisories(both)).extracting(e -> e.patient()).contains("Patient/" + a, "Patient/" + b);
        assertThat(queries.advisories(new AdvisoryFilter(
                        "hypoxemia",
                        null,
                        null,
                        t0.plus(1, ChronoUnit.MINUTES),
                        t0.plus(11, ChronoUnit.MINUTES),
                        null,
                        0,
                        0)))
                .extracting(e -> e.patient())
                .contains("Patient/" + b)
                .doesNotContain("Patient/" + a);
        // newest first, one per page
        AdvisoryFilter page1 = new AdvisoryFilter(null, null, null, t0, t0.plus(11, ChronoUnit.MINUTES), null, 1, 0);
        AdvisoryFilter page2 = new AdvisoryFilter(null, null, null, t0, t0.plus(11, ChronoUnit.MINUTES), null, 1, 1);
        assertThat(queries.advisories(page1)).hasSize(1);
        assertThat(queries.advisories(page1).get(0).startedAt())
                .isAfterOrEqualTo(queries.advisories(page2).get(0).startedAt());
        assertThat(queries.advisories(new AdvisoryFilter(null, "hypoxemia-severe", null, null, null, a, 0, 0)))
                .isEmpty();
    }

    @Test
    void anEpisodesEvaluationsCarryTheirInputsVersionsConvertedValuesAndFormulas() {
        String a = moderate("q-x", t0());
        String key = queries.advisoriesOf(a).get(0).key();
        List<EvaluationDetail> evaluations = queries.evaluationsOfEpisode(key);
        EvaluationDetail onset = evaluations.stream()
                .filter(e -> e.evaluation().outcome().equals("ONSET"))
                .findFirst()
                .orElseThrow();
        var measurements = onset.explanation().path("measurements");
        assertThat(measurements.toString())
                .contains("\"id\":\"" + a + "-pao2\"")
                .contains("\"version\":\"1\"");
        var pf = onset.explanation().path("indices").get(0);
        assertThat(pf.path("code").asText()).isEqualTo("PF_RATIO");
        assertThat(pf.path("value").asDouble()).isEqualTo(160.0);
        assertThat(queries.evaluation(onset.evaluation().id())).isPresent();
        assertThat(queries.evaluations(new EvaluationFilter(a, "hypoxemia", "onset", null, null, false, 0, 0)))
                .singleElement()
                .satisfies(e -> assertThat(e.episodeKey()).isEqualTo(key));
        assertThat(queries.writesOfEpisode(key))
                .singleElement()
                .satisfies(w -> assertThat(w.kind()).isEqualTo("FLAG"));
        assertThat(queries.values(a, List.of("PEEP", "FIO2"), t0().minus(1, ChronoUnit.DAYS)))
                .extracting(v -> v.kind() + "=" + v.value())
                .containsExactlyInAnyOrder("PEEP=8.0", "FIO2=0.5");
    }

    @Test
    void quarantineFiltersByReasonAndStageAndKeepsNoBodyExcerpt() {
        String id = "q-bad-" + UUID.randomUUID().toString().substring(0, 8);
        quarantine.add(new QuarantineRepository.Refusal(
                QuarantineStage.NORMALIZATION,
                "Observation",
                id,
                "3",
                "q-patient",
                DataQualityReason.UNKNOWN_UNIT,
                "Observation/" + id + " has unit mmHg, not a UCUM code",
                null,
                "abc123",
                null));
        assertThat(queries.quarantine(new QuarantineFilter("unknown-unit", "normalization", null, null, 0, 0)))
                .anySatisfy(q -> {
                    assertThat(q.reference()).isEqualTo("Observation/" + id + "/_history/3");
                    assertThat(q.patient()).isEqualTo("Patient/q-patient");
                    assertThat(q.serverOutcome()).isFalse();
                });
        assertThat(queries.quarantine(new QuarantineFilter("unknown-unit", "write_back", null, null, 0, 0)))
                .noneSatisfy(q -> assertThat(q.reference()).contains(id));
    }

    @Test
    void statisticsCountOnsetsPerDayAndVentilatedPatientDaysInUtc() {
        Instant t0 = t0().minus(3, ChronoUnit.DAYS);
        String a = moderate("q-s", t0);
        String b = moderate("q-s", t0.plus(5, ChronoUnit.MINUTES));
        var stats = statistics.statistics(t0.minus(2, ChronoUnit.HOURS), t0.plus(1, ChronoUnit.HOURS));
        assertThat(stats.ventilatedPatientDays()).isEqualTo(2);
        assertThat(stats.rules()).anySatisfy(r -> {
            assertThat(r.ruleId()).isEqualTo("hypoxemia");
            assertThat(r.onsets()).isEqualTo(2);
            assertThat(r.perHundredVentilatedPatientDays()).isEqualTo(100.0);
        });
        assertThat(stats.firingsPerDay()).anySatisfy(f -> {
            assertThat(f.ruleId()).isEqualTo("hypoxemia");
            assertThat(f.day()).isEqualTo(LocalDate.ofInstant(t0, java.time.ZoneOffset.UTC));
            assertThat(f.onsets()).isEqualTo(2);
        });
        assertThat(a).isNotEqualTo(b);
    }

    @Test
    void aModeSwitchIsKeptWithWhoWhyAndThePreviousMode() {
        catalog.switchMode("prone-criteria-met", EvaluationMode.SILENT, "store-test", "contract test");
        try {
            assertThat(queries.modeChanges("prone-criteria-met")).first().satisfies(c -> {
                assertThat(c.previousMode()).isEqualTo("ACTIVE");
                assertThat(c.newMode()).isEqualTo("SILENT");
                assertThat(c.changedBy()).isEqualTo("store-test");
                assertThat(c.reason()).isEqualTo("contract test");
            });
            assertThat(catalog.rule("prone-criteria-met").orElseThrow().mode()).isEqualTo("SILENT");
        } finally {
            catalog.switchMode("prone-criteria-met", EvaluationMode.ACTIVE, "store-test", "restore");
        }
    }
}
