package org.lungflag.service.evaluation;

import static org.assertj.core.api.Assertions.assertThat;

import java.time.Duration;
import java.time.Instant;
import java.time.LocalDate;
import java.time.temporal.ChronoUnit;
import java.util.ArrayList;
import java.util.List;
import java.util.UUID;
import java.util.concurrent.CompletableFuture;
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
import org.lungflag.service.intake.InboxChannel;
import org.lungflag.service.intake.InboxItem;
import org.lungflag.service.intake.InboxRepository;
import org.lungflag.service.normalize.NormalizedResource;
import org.lungflag.service.writeback.OutboxKind;
import org.lungflag.service.writeback.OutboxRepository;
import org.lungflag.service.writeback.OutboxRow;
import org.springframework.beans.factory.annotation.Autowired;
import org.springframework.jdbc.core.simple.JdbcClient;

/**
 * The audit store's behaviour, run against each database Lungflag supports (H2 embedded, PostgreSQL in CI): the
 * migrations apply, the inbox hands a row to one claimer only, one patient's work is recorded in one transaction
 * with its evaluations, episode and outbox row, a redelivery changes nothing, a lost cache is rebuilt from the
 * store without starting a second episode, and the outbox keeps each episode's writes in order.
 *
 * <p>Clinical expectation: P/F = 80 mmHg / 0.50 = 160, the Berlin moderate band with PEEP 8 cmH2O (Berlin 2012 via
 * clinical-reference §2.2 and worked example 2C [PUB-2]). Data invented.
 */
abstract class AuditStoreContract {

    @Autowired
    PatientProcessor processor;

    @Autowired
    InboxRepository inbox;

    @Autowired
    OutboxRepository outbox;

    @Autowired
    EpisodeRepository episodes;

    @Autowired
    EvaluatorCache cache;

    @Autowired
    JdbcClient jdbc;

    private static Measurement m(
            QuantityKind kind, double value, String unit, Instant at, ValueRole role, SourceRef src) {
        SpecimenKind specimen = kind.isBloodSample() ? SpecimenKind.ARTERIAL : SpecimenKind.NOT_APPLICABLE;
        return new Measurement(kind, value, at, role, specimen, src, new OriginalQuantity(value, unit), List.of());
    }

    private static Work work(SourceRef src, Instant receivedAt, ClinicalFact fact) {
        return new Work(
                null, new NormalizedResource(src, null, List.of(fact), List.of(), false), "TEST", null, receivedAt);
    }

    /** A ventilated patient with a moderate-band blood gas (P/F 160) at {@code t0}. */
    private static List<Work> moderateBloodGas(String p, Instant t0) {
        SourceRef support = SourceRef.observation(p + "-sup", "1");
        SourceRef fio2 = SourceRef.observation(p + "-fio2", "1");
        SourceRef peep = SourceRef.observation(p + "-peep", "1");
        SourceRef pao2 = SourceRef.observation(p + "-pao2", "1");
        return List.of(
                work(
                        support,
                        t0,
                        new SupportState(
                                SupportMode.INVASIVE_VENTILATION, null, t0.minus(2, ChronoUnit.HOURS), support)),
                work(
                        fio2,
                        t0,
                        m(QuantityKind.FIO2, 0.5, "1", t0.minus(30, ChronoUnit.MINUTES), ValueRole.SETTING, fio2)),
                work(
                        peep,
                        t0,
                        m(QuantityKind.PEEP, 8, "cm[H2O]", t0.minus(30, ChronoUnit.MINUTES), ValueRole.SETTING, peep)),
                work(pao2, t0, m(QuantityKind.PAO2, 80, "mm[Hg]", t0, ValueRole.MEASUREMENT, pao2)));
    }

    private static PatientFacts patient(String id) {
        return new PatientFacts(id, Sex.FEMALE, LocalDate.of(1968, 3, 1));
    }

    private long count(String sql, String p) {
        return jdbc.sql(sql).param("p", p).query(Long.class).single();
    }

    @Test
    void appliesOnePatientsWorkWithItsEvaluationsEpisodeAndOutboxRowTogether() {
        String p = "store-" + UUID.randomUUID().toString().substring(0, 8);
        Instant t0 = Instant.now().minus(5, ChronoUnit.HOURS).truncatedTo(ChronoUnit.SECONDS);
        processor.apply(p, patient(p), moderateBloodGas(p, t0));
        assertThat(episodes.forPatient(p)).singleElement().satisfies(e -> {
            assertThat(e.code()).isEqualTo("hypoxemia-moderate");
            assertThat(e.status()).isEqualTo("ACTIVE");
        });
        assertThat(count("SELECT COUNT(*) FROM evaluation WHERE patient_id = :p AND rule_id = 'hypoxemia'", p))
                .isPositive();
        assertThat(count("SELECT COUNT(*) FROM outbox WHERE patient_id = :p AND kind = 'FLAG'", p))
                .isEqualTo(1);
        assertThat(count("SELECT COUNT(*) FROM normalized_value WHERE patient_id = :p", p))
                .isEqualTo(4);
    }

    @Test
    void aRedeliveryChangesNothingAndALostCacheIsRebuiltWithoutASecondEpisode() {
        String p = "store-" + UUID.randomUUID().toString().substring(0, 8);
        Instant t0 = Instant.now().minus(5, ChronoUnit.HOURS).truncatedTo(ChronoUnit.SECONDS);
        processor.apply(p, patient(p), moderateBloodGas(p, t0));
        long evaluations = count("SELECT COUNT(*) FROM evaluation WHERE patient_id = :p", p);
        processor.apply(p, patient(p), moderateBloodGas(p, t0));
        assertThat(count("SELECT COUNT(*) FROM evaluation WHERE patient_id = :p", p))
                .isEqualTo(evaluations);

        cache.evict(p); // as after a restart: the evaluator is rebuilt from the stored timeline and state
        Instant t1 = t0.plus(1, ChronoUnit.HOURS);
        SourceRef fio2b = SourceRef.observation(p + "-fio2b", "1");
        SourceRef peepb = SourceRef.observation(p + "-peepb", "1");
        SourceRef pao2b = SourceRef.observation(p + "-pao2b", "1");
        processor.apply(
                p,
                patient(p),
                List.of(
                        work(
                                fio2b,
                                t1,
                                m(
                                        QuantityKind.FIO2,
                                        0.5,
                                        "1",
                                        t1.minus(20, ChronoUnit.MINUTES),
                                        ValueRole.SETTING,
                                        fio2b)),
                        work(
                                peepb,
                                t1,
                                m(
                                        QuantityKind.PEEP,
                                        8,
                                        "cm[H2O]",
                                        t1.minus(20, ChronoUnit.MINUTES),
                                        ValueRole.SETTING,
                                        peepb)),
                        work(pao2b, t1, m(QuantityKind.PAO2, 85, "mm[Hg]", t1, ValueRole.MEASUREMENT, pao2b))));
        assertThat(episodes.forPatient(p))
                .singleElement()
                .satisfies(e -> assertThat(e.status()).isEqualTo("ACTIVE"));
        assertThat(count("SELECT COUNT(*) FROM outbox WHERE patient_id = :p AND kind = 'FLAG'", p))
                .isEqualTo(1);
    }

    @Test
    void aBatchOfPatientsIsAppliedInOneTransactionWithTheSameResultAsOneByOne() {
        String run = UUID.randomUUID().toString().substring(0, 8);
        String a = "batch-a-" + run;
        String b = "batch-b-" + run;
        String alone = "batch-alone-" + run;
        Instant t0 = Instant.now().minus(5, ChronoUnit.HOURS).truncatedTo(ChronoUnit.SECONDS);
        processor.applyAll(List.of(
                new PatientProcessor.PatientWork(a, patient(a), moderateBloodGas(a, t0)),
                new PatientProcessor.PatientWork(b, patient(b), moderateBloodGas(b, t0))));
        processor.apply(alone, patient(alone), moderateBloodGas(alone, t0));
        long evaluationsAlone = count("SELECT COUNT(*) FROM evaluation WHERE patient_id = :p", alone);
        assertThat(evaluationsAlone).isPositive();
        for (String p : List.of(a, b)) {
            assertThat(count("SELECT COUNT(*) FROM evaluation WHERE patient_id = :p", p))
                    .isEqualTo(evaluationsAlone);
            assertThat(episodes.forPatient(p)).singleElement().satisfies(e -> {
                assertThat(e.code()).isEqualTo("hypoxemia-moderate");
                assertThat(e.status()).isEqualTo("ACTIVE");
            });
            assertThat(count("SELECT COUNT(*) FROM outbox WHERE patient_id = :p AND kind = 'FLAG'", p))
                    .isEqualTo(1);
            assertThat(count("SELECT COUNT(*) FROM normalized_value WHERE patient_id = :p", p))
                    .isEqualTo(4);
            assertThat(count("SELECT COUNT(*) FROM received_resource WHERE patient_id = :p", p))
                    .isEqualTo(4);
            assertThat(count("SELECT state_seq FROM patient_state WHERE patient_id = :p", p))
                    .isEqualTo(1);
        }
    }

    @Test
    void aBatchThatFailsKeepsNothingOfAnyPatientAndTheirEvaluatorsAreRebuiltAfterwards() {
        String run = UUID.randomUUID().toString().substring(0, 8);
        String p = "batch-ok-" + run;
        // longer than the 64 characters of a FHIR id and of the patient_id columns: the database refuses it
        String tooLong = "batch-refused-" + run + "-" + "x".repeat(64);
        Instant t0 = Instant.now().minus(5, ChronoUnit.HOURS).truncatedTo(ChronoUnit.SECONDS);
        org.assertj.core.api.Assertions.assertThatThrownBy(() -> processor.applyAll(List.of(
                        new PatientProcessor.PatientWork(p, patient(p), moderateBloodGas(p, t0)),
                        new PatientProcessor.PatientWork(tooLong, patient(tooLong), moderateBloodGas(tooLong, t0)))))
                .isInstanceOf(org.springframework.dao.DataAccessException.class);
        assertThat(count("SELECT COUNT(*) FROM evaluation WHERE patient_id = :p", p))
                .isZero();
        assertThat(count("SELECT COUNT(*) FROM normalized_value WHERE patient_id = :p", p))
                .isZero();
        assertThat(count("SELECT COUNT(*) FROM outbox WHERE patient_id = :p", p))
                .isZero();
        assertThat(cache.get(p)).isNull();

        processor.apply(p, patient(p), moderateBloodGas(p, t0));
        assertThat(episodes.forPatient(p))
                .singleElement()
                .satisfies(e -> assertThat(e.status()).isEqualTo("ACTIVE"));
        assertThat(count("SELECT COUNT(*) FROM normalized_value WHERE patient_id = :p", p))
                .isEqualTo(4);
    }

    @Test
    void aVersionReplacedOrWithdrawnInTheSameBatchIsStoredRetracted() {
        String p = "store-" + UUID.randomUUID().toString().substring(0, 8);
        Instant t0 = Instant.now().minus(5, ChronoUnit.HOURS).truncatedTo(ChronoUnit.SECONDS);
        List<Work> work = new ArrayList<>(moderateBloodGas(p, t0));
        SourceRef pao2v2 = SourceRef.observation(p + "-pao2", "2");
        work.add(work(pao2v2, t0, m(QuantityKind.PAO2, 180, "mm[Hg]", t0, ValueRole.MEASUREMENT, pao2v2)));
        SourceRef paco2 = SourceRef.observation(p + "-paco2", "1");
        work.add(work(paco2, t0, m(QuantityKind.PACO2, 41, "mm[Hg]", t0, ValueRole.MEASUREMENT, paco2)));
        work.add(new Work(
                null,
                new NormalizedResource(SourceRef.observation(p + "-paco2", "2"), p, List.of(), List.of(), true),
                "TEST",
                null,
                t0));
        processor.apply(p, patient(p), work);
        assertThat(jdbc.sql("""
                                SELECT source_id || '/' || source_version FROM normalized_value
                                 WHERE patient_id = :p AND NOT retracted ORDER BY source_id
                                """).param("p", p).query(String.class).list())
                .containsExactly(p + "-fio2/1", p + "-pao2/2", p + "-peep/1", p + "-sup/1");
        assertThat(count("SELECT COUNT(*) FROM normalized_value WHERE patient_id = :p AND retracted", p))
                .isEqualTo(2); // PaO2 version 1 and the withdrawn PaCO2
        // the PaO2 of version 2 (P/F 360) meets no band: the moderate episode opened on version 1 is not standing
        assertThat(episodes.forPatient(p))
                .allSatisfy(e -> assertThat(e.status()).isNotEqualTo("ACTIVE"));
    }

    @Test
    void anInboxRowIsHandedToOneClaimerOnly() throws Exception {
        List<Long> ids = new ArrayList<>();
        for (int i = 0; i < 20; i++) {
            ids.add(inbox.add("Observation", "claim-" + UUID.randomUUID(), "1", InboxChannel.REST_HOOK, "{}"));
        }
        CompletableFuture<List<InboxItem>> a =
                CompletableFuture.supplyAsync(() -> inbox.claim("a", 20, Duration.ofMinutes(1)));
        CompletableFuture<List<InboxItem>> b =
                CompletableFuture.supplyAsync(() -> inbox.claim("b", 20, Duration.ofMinutes(1)));
        List<Long> claimed = new ArrayList<>();
        a.get().forEach(i -> claimed.add(i.id()));
        b.get().forEach(i -> claimed.add(i.id()));
        assertThat(claimed).doesNotHaveDuplicates();
        assertThat(claimed).containsAll(ids);
        inbox.markDone(claimed);
    }

    @Test
    void rowsAnOwnerCouldNotFinishAreTakenAgainByItAtOnceAndByOthersOnlyAfterTheLease() {
        String owner = "stranded-" + UUID.randomUUID();
        long id = inbox.add("Observation", "stranded-" + UUID.randomUUID(), "1", InboxChannel.REST_HOOK, "{}");
        List<Long> first = inbox.claim(owner, 500, Duration.ofMinutes(10)).stream()
                .map(InboxItem::id)
                .toList();
        assertThat(first).contains(id);
        // neither done nor released (the database failed before the outcome was recorded)
        assertThat(inbox.claim("someone-else-" + UUID.randomUUID(), 500, Duration.ofMinutes(10)).stream()
                        .map(InboxItem::id))
                .doesNotContain(id);
        assertThat(inbox.claim(owner, 500, Duration.ofMinutes(10)).stream().map(InboxItem::id))
                .contains(id);
        inbox.markDone(List.of(id));
    }

    @Test
    void theOutboxDeliversAnEpisodesRowsInOrder() {
        String key = "order-" + UUID.randomUUID();
        long first = outbox.add(OutboxKind.FLAG, key, "p-order", null, "{}", false);
        long second = outbox.add(OutboxKind.FLAG, key, "p-order", null, "{}", false);
        List<Long> firstRound = outbox.claim(500, Duration.ofMinutes(1)).stream()
                .map(OutboxRow::id)
                .toList();
        assertThat(firstRound).contains(first).doesNotContain(second);
        outbox.delivered(first, null);
        List<Long> secondRound = outbox.claim(500, Duration.ofMinutes(1)).stream()
                .map(OutboxRow::id)
                .toList();
        assertThat(secondRound).contains(second);
        outbox.delivered(second, null);
    }

    @Test
    void theOutboxNeverHandsOutTwoRowsOfOnePatientAtOnceWhateverTheirEpisode() {
        String patient = "p-" + UUID.randomUUID().toString().substring(0, 8);
        String other = "q-" + UUID.randomUUID().toString().substring(0, 8);
        long flagOfOneEpisode = outbox.add(OutboxKind.FLAG, "one-" + UUID.randomUUID(), patient, null, "{}", false);
        long indices = outbox.add(OutboxKind.INDICES, null, patient, null, "{}", false);
        long flagOfAnotherEpisode = outbox.add(OutboxKind.FLAG, "two-" + UUID.randomUUID(), patient, null, "{}", false);
        long otherPatient = outbox.add(OutboxKind.INDICES, null, other, null, "{}", false);
        List<Long> expected = List.of(flagOfOneEpisode, indices, flagOfAnotherEpisode);
        for (long next : expected) {
            List<Long> round = outbox.claim(500, Duration.ofMinutes(1)).stream()
                    .map(OutboxRow::id)
                    .filter(id -> expected.contains(id) || id == otherPatient)
                    .toList();
            assertThat(round)
                    .as("one row of the patient per round, the earliest first")
                    .containsOnlyOnce(next)
                    .doesNotContainAnyElementsOf(
                            expected.stream().filter(id -> id != next).toList());
            if (next == flagOfOneEpisode) {
                assertThat(round).as("another patient's row is not held back").contains(otherPatient);
            }
            outbox.delivered(next, null);
        }
        outbox.delivered(otherPatient, null);
    }
}
