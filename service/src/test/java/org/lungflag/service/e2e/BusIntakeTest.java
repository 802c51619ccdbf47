package org.lungflag.service.e2e;

import static org.assertj.core.api.Assertions.assertThat;
import static org.awaitility.Awaitility.await;
import static org.lungflag.service.e2e.FhirFixtures.loinc;
import static org.lungflag.service.e2e.FhirFixtures.patient;
import static org.lungflag.service.e2e.FhirFixtures.setting;
import static org.lungflag.service.e2e.FhirFixtures.support;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.rest.client.api.IGenericClient;
import io.micrometer.core.instrument.MeterRegistry;
import java.time.Duration;
import java.time.Instant;
import java.time.temporal.ChronoUnit;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.UUID;
import org.apache.kafka.clients.admin.AdminClient;
import org.apache.kafka.clients.admin.AdminClientConfig;
import org.apache.kafka.clients.admin.OffsetSpec;
import org.apache.kafka.clients.consumer.OffsetAndMetadata;
import org.apache.kafka.clients.producer.ProducerConfig;
import org.apache.kafka.common.TopicPartition;
import org.apache.kafka.common.serialization.StringSerializer;
import org.hl7.fhir.r4.model.Enumerations.AdministrativeGender;
import org.hl7.fhir.r4.model.Observation;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.springframework.beans.factory.annotation.Autowired;
import org.springframework.boot.test.context.SpringBootTest;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.kafka.core.DefaultKafkaProducerFactory;
import org.springframework.kafka.core.KafkaTemplate;
import org.springframework.kafka.test.EmbeddedKafkaBroker;
import org.springframework.kafka.test.context.EmbeddedKafka;
import org.springframework.test.annotation.DirtiesContext;
import org.springframework.test.context.ActiveProfiles;
import org.springframework.test.context.DynamicPropertyRegistry;
import org.springframework.test.context.DynamicPropertySource;

/**
 * The integration-bus intake against an embedded KRaft broker: Observations posted to the topic (keyed by patient
 * id, value = the FHIR R4 JSON the FHIR server stores) become evaluations through the same inbox, normalization and
 * evaluation as the rest-hook; a malformed record is quarantined with a reason and the consumer goes on; a
 * redelivered record changes nothing; offsets are committed once the records are in the inbox.
 *
 * <p>Expected band from the Berlin definition (ARDS Definition Task Force, JAMA 2012, clinical-reference §2.2
 * [PUB-2]): PaO2 80 mmHg at FiO2 0.50 with PEEP 10 cmH2O gives P/F 160, the moderate band (100 < P/F ≤ 200). The
 * patients and values are invented. Write-back is silent here: the Observations exist only on the bus.
 */
@DirtiesContext(classMode = DirtiesContext.ClassMode.AFTER_CLASS)
@SpringBootTest
@ActiveProfiles("test")
@EmbeddedKafka(kraft = true, partitions = 3, topics = BusIntakeTest.TOPIC)
class BusIntakeTest {

    static final String TOPIC = "lungflag-test-observations";

    @DynamicPropertySource
    static void properties(DynamicPropertyRegistry registry) {
        registry.add("lungflag.fhir.base-url", () -> SandboxServer.server().baseUrl());
        registry.add("lungflag.intake.bus.enabled", () -> "true");
        registry.add("lungflag.intake.bus.bootstrap-servers", () -> "${spring.embedded.kafka.brokers}");
        registry.add("lungflag.intake.bus.topic", () -> TOPIC);
        registry.add("lungflag.intake.bus.group-id", () -> "lungflag-bus-test");
        registry.add("lungflag.writeback.mode", () -> "silent");
        registry.add("lungflag.evaluation.advance-interval", () -> "1h");
    }

    @Autowired
    EmbeddedKafkaBroker broker;

    @Autowired
    JdbcClient jdbc;

    @Autowired
    MeterRegistry meters;

    @Autowired
    FhirContext fhirContext;

    static IGenericClient fhir;

    @BeforeAll
    static void client() {
        FhirContext ctx = FhirContext.forR4Cached();
        ctx.getRestfulClientFactory()
                .setServerValidationMode(ca.uhn.fhir.rest.client.api.ServerValidationModeEnum.NEVER);
        fhir = ctx.newRestfulGenericClient(SandboxServer.server().baseUrl());
    }

    private KafkaTemplate<String, String> producer() {
        Map<String, Object> config = new HashMap<>();
        config.put(ProducerConfig.BOOTSTRAP_SERVERS_CONFIG, broker.getBrokersAsString());
        config.put(ProducerConfig.ACKS_CONFIG, "all");
        return new KafkaTemplate<>(
                new DefaultKafkaProducerFactory<>(config, new StringSerializer(), new StringSerializer()));
    }

    private String newPatient() {
        String id = "bus-" + UUID.randomUUID().toString().substring(0, 8);
        fhir.update()
                .resource(patient(id, AdministrativeGender.FEMALE, "1958-09-14"))
                .execute();
        return id;
    }

    /** The JSON a FHIR server would publish for a stored Observation: with its id and version. */
    private String stored(Observation o, String id) {
        o.setId(id);
        o.getMeta().setVersionId("1");
        return fhirContext.newJsonParser().encodeResourceToString(o);
    }

    private void send(KafkaTemplate<String, String> producer, String key, String value) throws Exception {
        producer.send(TOPIC, key, value).get();
    }

    private double busRecords(String outcome) {
        var counter = meters.find("lungflag.intake.bus.records")
                .tag("outcome", outcome)
                .counter();
        return counter == null ? 0 : counter.count();
    }

    private List<String> tiers(String patientId) {
        return jdbc.sql("SELECT tier_code FROM evaluation WHERE patient_id = :p AND rule_id = 'hypoxemia'"
                        + " AND NOT superseded AND tier_code IS NOT NULL")
                .param("p", patientId)
                .query(String.class)
                .list();
    }

    private long count(String sql, String patientId) {
        return jdbc.sql(sql).param("p", patientId).query(Long.class).single();
    }

    @Test
    void recordsOnTheTopicBecomeEvaluationsAndARedeliveredRecordChangesNothing() throws Exception {
        KafkaTemplate<String, String> producer = producer();
        String p = newPatient();
        String prefix = p + "-obs-";
        Instant t0 = Instant.now().minus(3, ChronoUnit.HOURS).truncatedTo(ChronoUnit.MINUTES);
        send(producer, p, stored(loinc(p, "8302-2", 165, "cm", t0.minus(2, ChronoUnit.HOURS)), prefix + "1"));
        send(producer, p, stored(support(p, "invasive-ventilation", t0.minus(90, ChronoUnit.MINUTES)), prefix + "2"));
        send(producer, p, stored(setting(p, "19994-3", 0.5, "1", t0.minus(40, ChronoUnit.MINUTES)), prefix + "3"));
        send(producer, p, stored(setting(p, "76248-4", 10, "cm[H2O]", t0.minus(40, ChronoUnit.MINUTES)), prefix + "4"));
        String pao2 = stored(loinc(p, "2703-7", 80, "mm[Hg]", t0), prefix + "5");
        send(producer, p, pao2);

        await().atMost(Duration.ofSeconds(40)).until(() -> tiers(p).contains("hypoxemia-moderate"));
        assertThat(count("SELECT COUNT(*) FROM received_resource WHERE patient_id = :p AND channel = 'BUS'", p))
                .isEqualTo(5);

        String evaluations = "SELECT COUNT(*) FROM evaluation WHERE patient_id = :p";
        String outbox = "SELECT COUNT(*) FROM outbox WHERE patient_id = :p";
        String receivedRows = "SELECT COUNT(*) FROM received_resource WHERE patient_id = :p";
        String inboxRows = "SELECT COUNT(*) FROM intake_inbox WHERE resource_id LIKE :p";
        long evaluationsBefore = count(evaluations, p);
        long outboxBefore = count(outbox, p);
        long receivedBefore = count(receivedRows, p);
        long inboxBefore =
                jdbc.sql(inboxRows).param("p", prefix + "%").query(Long.class).single();
        double redelivered = busRecords("redelivered");

        send(producer, p, pao2); // the bus delivers the same record again
        await().atMost(Duration.ofSeconds(30)).until(() -> busRecords("redelivered") > redelivered);

        assertThat(count(evaluations, p)).isEqualTo(evaluationsBefore);
        assertThat(count(outbox, p)).isEqualTo(outboxBefore);
        assertThat(count(receivedRows, p)).isEqualTo(receivedBefore);
        assertThat(jdbc.sql(inboxRows)
                        .param("p", prefix + "%")
                        .query(Long.class)
                        .single())
                .isEqualTo(inboxBefore);
        assertThat(tiers(p)).containsOnly("hypoxemia-moderate");
        assertOffsetsCommittedToTheEnd();
    }

    @Test
    void aMalformedRecordIsQuarantinedWithAReasonAndTheConsumerGoesOn() throws Exception {
        KafkaTemplate<String, String> producer = producer();
        String p = newPatient();
        String marker = UUID.randomUUID().toString().substring(0, 8);
        double quarantined = busRecords("quarantined");

        send(producer, p, "{\"resourceType\":\"Observation\", \"status\": " + marker); // cut off
        send(producer, p, "{\"resourceType\":\"Patient\",\"id\":\"" + p + "-" + marker + "\"}");
        Observation noVersion = loinc(p, "2703-7", 70, "mm[Hg]", Instant.now().minus(1, ChronoUnit.HOURS));
        noVersion.setId(p + "-noversion");
        send(producer, p, fhirContext.newJsonParser().encodeResourceToString(noVersion));
        send(producer, p, null);
        // and a good record behind them, on the same partition (same key)
        Instant t = Instant.now().minus(2, ChronoUnit.HOURS).truncatedTo(ChronoUnit.MINUTES);
        send(producer, p, stored(loinc(p, "8302-2", 170, "cm", t), p + "-height"));

        await().atMost(Duration.ofSeconds(40))
                .until(() -> count(
                                "SELECT COUNT(*) FROM received_resource WHERE resource_id = :p AND channel = 'BUS'",
                                p + "-height")
                        == 1);
        assertThat(busRecords("quarantined") - quarantined).isEqualTo(4);
        List<Map<String, Object>> refusals = jdbc.sql(
                        "SELECT stage, reason_code, resource_type, resource_id, detail FROM quarantine"
                                + " WHERE detail LIKE :topic AND created_at > :since ORDER BY id")
                .param("topic", "bus record " + TOPIC + "-%")
                .param("since", java.sql.Timestamp.from(Instant.now().minus(5, ChronoUnit.MINUTES)))
                .query()
                .listOfRows();
        assertThat(refusals)
                .anySatisfy(r -> {
                    assertThat(r.get("reason_code")).isEqualTo("malformed-resource");
                    assertThat((String) r.get("detail")).contains("is not a parseable FHIR R4 JSON resource");
                })
                .anySatisfy(r -> {
                    assertThat(r.get("reason_code")).isEqualTo("unsupported-resource-type");
                    assertThat(r.get("resource_id")).isEqualTo(p + "-" + marker);
                    assertThat((String) r.get("detail")).contains("is a Patient");
                })
                .anySatisfy(r -> {
                    assertThat(r.get("resource_id")).isEqualTo(p + "-noversion");
                    assertThat((String) r.get("detail")).contains("has no meta.versionId");
                })
                .anySatisfy(r -> assertThat((String) r.get("detail")).contains("has no value"));
        assertThat(refusals).allSatisfy(r -> assertThat(r.get("stage")).isEqualTo("INTAKE"));
        assertOffsetsCommittedToTheEnd();
    }

    /** Everything on the topic has been recorded, so the group's committed offsets reach the end of each partition. */
    private void assertOffsetsCommittedToTheEnd() {
        try (AdminClient admin =
                AdminClient.create(Map.of(AdminClientConfig.BOOTSTRAP_SERVERS_CONFIG, broker.getBrokersAsString()))) {
            await().atMost(Duration.ofSeconds(20)).untilAsserted(() -> {
                Map<TopicPartition, OffsetAndMetadata> committed = admin.listConsumerGroupOffsets("lungflag-bus-test")
                        .partitionsToOffsetAndMetadata()
                        .get();
                Map<TopicPartition, OffsetSpec> latest = new HashMap<>();
                for (int i = 0; i < 3; i++) {
                    latest.put(new TopicPartition(TOPIC, i), OffsetSpec.latest());
                }
                var ends = admin.listOffsets(latest).all().get();
                for (var e : ends.entrySet()) {
                    long end = e.getValue().offset();
                    long at = committed.containsKey(e.getKey())
                            ? committed.get(e.getKey()).offset()
                            : 0;
                    assertThat(at).as("committed offset of %s", e.getKey()).isEqualTo(end);
                }
            });
        }
    }
}
