package org.lungflag.service.evaluation;

import static org.assertj.core.api.Assertions.assertThat;

import ca.uhn.fhir.rest.client.api.IGenericClient;
import java.time.Instant;
import java.time.temporal.ChronoUnit;
import java.util.ArrayList;
import java.util.List;
import java.util.UUID;
import org.hl7.fhir.r4.model.Bundle;
import org.hl7.fhir.r4.model.Flag;
import org.hl7.fhir.r4.model.Observation;
import org.junit.jupiter.api.Test;
import org.lungflag.fhir.profiles.LungflagFhir;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.measure.ValueRole;
import org.lungflag.service.writeback.OutboxStatus;
import org.springframework.boot.test.context.SpringBootTest;
import org.springframework.test.annotation.DirtiesContext;
import org.springframework.test.context.ActiveProfiles;
import org.springframework.test.context.TestPropertySource;

/**
 * One evaluation batch (a re-run after late data) in which an episode starts and the patient's last evaluation in
 * the batch is not evaluable: the episode stays active, and its Flag must carry
 * the basis and the inputs of the evaluation that met the tier, not the empty explanation of the one that could not
 * be evaluated (which Lungflag's own Flag profile refuses, so the advisory would never reach the record).
 *
 * <p>P/F = 80 / 0.50 = 160 mmHg is the Berlin moderate band (ARDS Definition Task Force, JAMA 2012; clinical-reference
 * worked example 2C). The second blood gas two hours later has no FiO2 charted within the 60 min before it, so
 * P/F cannot be computed (the hypoxemia rule's missing-fio2 condition). Data invented.
 */
@DirtiesContext(classMode = DirtiesContext.ClassMode.AFTER_CLASS)
@SpringBootTest
@ActiveProfiles("test")
@TestPropertySource(
        properties = {
            "lungflag.writeback.mode=flags",
            "lungflag.intake.register-subscriptions=false",
            "lungflag.evaluation.processor-enabled=false",
            "lungflag.writeback.poll-interval=1h"
        })
class BatchEndingNotEvaluableTest extends WritebackModesTest.WithSandbox {

    @Test
    void theFlagOfAnEpisodeStillActiveCarriesTheBasisThatMetTheTier() {
        String p = "batch-" + UUID.randomUUID().toString().substring(0, 8);
        IGenericClient fhir = WritebackModesTest.client();
        Instant t0 = Instant.now().minus(6, ChronoUnit.HOURS).truncatedTo(ChronoUnit.SECONDS);
        List<Work> moderate = WritebackModesTest.moderate(fhir, p, t0);
        // the settings and the later gas first; the first gas arrives on its own afterwards, so the evaluator re-runs
        // from before it and that one batch holds the onset and then the evaluation that could not be done
        List<Work> work = new ArrayList<>(moderate.subList(0, moderate.size() - 1));
        SourceRef laterGas = SourceRef.observation("later-gas-" + p, "1");
        work.add(WritebackModesTest.work(
                laterGas,
                WritebackModesTest.m(
                        QuantityKind.PAO2,
                        75,
                        "mm[Hg]",
                        t0.plus(2, ChronoUnit.HOURS),
                        ValueRole.MEASUREMENT,
                        laterGas)));

        processor.apply(p, WritebackModesTest.patient(p), work);
        processor.apply(p, WritebackModesTest.patient(p), List.of(moderate.get(moderate.size() - 1)));
        while (deliverer.deliverBatch() > 0) {
            // drain
        }

        // the batch as the rule saw it: onset at the first gas, not evaluable at the second, episode still active
        assertThat(jdbc.sql("""
                        SELECT outcome FROM evaluation WHERE patient_id = :p AND rule_id = 'hypoxemia' AND superseded = FALSE

                         ORDER BY anchor_time
                        """).param("p", p).query(String.class).list()).containsExactly("ONSET", "NOT_EVALUABLE");
        assertThat(jdbc.sql("SELECT status, last_error FROM outbox WHERE patient_id = :p AND kind = 'FLAG'")
                        .param("p", p)
                        .query()
                        .listOfRows())
                .isNotEmpty()
                .allSatisfy(r ->
                        assertThat(r.get("status")).as("outbox row %s", r).isEqualTo(OutboxStatus.DELIVERED.name()));

        Bundle flags = fhir.search()
                .forResource(Flag.class)
                .where(Flag.PATIENT.hasId("Patient/" + p))
                .returnBundle(Bundle.class)
                .execute();
        assertThat(flags.getEntry()).singleElement().satisfies(entry -> {
            Flag flag = (Flag) entry.getResource();
            assertThat(flag.getStatus()).isEqualTo(Flag.FlagStatus.ACTIVE);
            assertThat(flag.getCode().getCodingFirstRep().getCode()).isEqualTo("hypoxemia-moderate");
            assertThat(flag.getExtensionByUrl(LungflagFhir.Extensions.ADVISORY_BASIS)
                            .getValue()
                            .primitiveValue())
                    .contains("P/F 160 mmHg");
            // the inputs cited are the onset's (its blood gas among them), not the later gas P/F could not use
            List<String> details = flag.getExtensionsByUrl(LungflagFhir.Extensions.FLAG_DETAIL).stream()
                    .map(e -> ((org.hl7.fhir.r4.model.Reference) e.getValue()).getReference())
                    .toList();
            assertThat(details).hasSizeGreaterThanOrEqualTo(3).noneMatch(d -> d.contains("later-gas-"));
        });
        assertThat(fhir.search()
                        .forResource(Observation.class)
                        .where(Observation.SUBJECT.hasId("Patient/" + p))
                        .returnBundle(Bundle.class)
                        .execute()
                        .getEntry())
                .as("write-back mode 'flags' writes no derived-index Observation")
                .isEmpty();
    }
}
