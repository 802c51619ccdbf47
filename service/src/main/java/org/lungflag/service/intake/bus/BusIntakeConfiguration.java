package org.lungflag.service.intake.bus;

import ca.uhn.fhir.context.FhirContext;
import io.micrometer.core.instrument.MeterRegistry;
import java.util.HashMap;
import java.util.Map;
import org.apache.kafka.clients.consumer.ConsumerConfig;
import org.apache.kafka.clients.consumer.CooperativeStickyAssignor;
import org.apache.kafka.common.serialization.StringDeserializer;
import org.lungflag.service.audit.QuarantineRepository;
import org.lungflag.service.audit.ReceivedResourceRepository;
import org.lungflag.service.intake.InboxRepository;
import org.lungflag.service.intake.InboxSignal;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;
import org.springframework.boot.autoconfigure.condition.ConditionalOnProperty;
import org.springframework.context.annotation.Bean;
import org.springframework.context.annotation.Configuration;
import org.springframework.kafka.core.DefaultKafkaConsumerFactory;
import org.springframework.kafka.listener.ConcurrentMessageListenerContainer;
import org.springframework.kafka.listener.ContainerProperties;
import org.springframework.kafka.listener.DefaultErrorHandler;
import org.springframework.transaction.support.TransactionTemplate;
import org.springframework.util.backoff.FixedBackOff;

/**
 * The bus consumer, only when {@code lungflag.intake.bus.enabled=true}: one consumer group over one topic, string
 * keys and values, offsets committed by the container after each poll has been recorded (never auto-committed),
 * cooperative rebalancing so an instance joining or leaving moves only the partitions it must.
 */
@Configuration(proxyBeanMethods = false)
@ConditionalOnProperty(prefix = "lungflag.intake.bus", name = "enabled", havingValue = "true")
class BusIntakeConfiguration {

    private static final Logger log = LoggerFactory.getLogger(BusIntakeConfiguration.class);

    @Bean
    BusRecordHandler busRecordHandler(
            FhirContext fhir,
            InboxRepository inbox,
            InboxSignal signal,
            QuarantineRepository quarantine,
            ReceivedResourceRepository received,
            TransactionTemplate tx,
            MeterRegistry meters) {
        return new BusRecordHandler(fhir, inbox, signal, quarantine, received, tx, meters);
    }

    @Bean
    ConcurrentMessageListenerContainer<String, String> busIntakeContainer(
            BusProperties properties, BusRecordHandler handler) {
        Map<String, Object> config = new HashMap<>(properties.consumer());
        config.put(ConsumerConfig.BOOTSTRAP_SERVERS_CONFIG, String.join(",", properties.bootstrapServers()));
        config.put(ConsumerConfig.GROUP_ID_CONFIG, properties.groupId());
        config.put(ConsumerConfig.ENABLE_AUTO_COMMIT_CONFIG, false);
        config.put(ConsumerConfig.AUTO_OFFSET_RESET_CONFIG, properties.autoOffsetReset());
        config.put(ConsumerConfig.MAX_POLL_RECORDS_CONFIG, properties.maxPollRecords());
        config.put(ConsumerConfig.ISOLATION_LEVEL_CONFIG, "read_committed");
        config.put(ConsumerConfig.PARTITION_ASSIGNMENT_STRATEGY_CONFIG, CooperativeStickyAssignor.class.getName());
        DefaultKafkaConsumerFactory<String, String> factory =
                new DefaultKafkaConsumerFactory<>(config, new StringDeserializer(), new StringDeserializer());

        ContainerProperties container = new ContainerProperties(properties.topic());
        container.setAckMode(ContainerProperties.AckMode.BATCH);
        container.setSyncCommits(true);
        container.setMessageListener(handler);
        ConcurrentMessageListenerContainer<String, String> listener =
                new ConcurrentMessageListenerContainer<>(factory, container);
        listener.setConcurrency(properties.concurrency());
        listener.setBeanName("lungflag-bus");
        // the handler quarantines bad records itself; what reaches here is the database refusing a poll: retry it,
        // without committing, for as long as it takes
        listener.setCommonErrorHandler(new DefaultErrorHandler(
                new FixedBackOff(properties.retryBackoff().toMillis(), FixedBackOff.UNLIMITED_ATTEMPTS)));
        log.info(
                "bus intake on topic {} as consumer group {} ({} consumers)",
                properties.topic(),
                properties.groupId(),
                properties.concurrency());
        return listener;
    }
}
