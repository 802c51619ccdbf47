package org.lungflag.service.intake.bus;

import java.time.Duration;
import java.util.List;
import java.util.Map;
import org.springframework.boot.context.properties.ConfigurationProperties;
import org.springframework.boot.context.properties.bind.DefaultValue;

/**
 * Integration-bus intake settings ({@code lungflag.intake.bus.*}).
 *
 * @param enabled consume the topic; off by default (the rest-hook and the catch-up search need no bus)
 * @param bootstrapServers the Kafka brokers, {@code host:port}
 * @param topic the topic of FHIR R4 Observations (JSON), keyed by patient id
 * @param groupId the consumer group; every Lungflag instance of one deployment uses the same one, so each partition
 *     (and so each patient) is read by one instance at a time
 * @param concurrency consumers per instance (at most the topic's partitions across all instances do work)
 * @param maxPollRecords records per poll; one poll is recorded in one database transaction
 * @param autoOffsetReset where a new consumer group starts: {@code earliest} (everything the topic retains) or
 *     {@code latest}
 * @param retryBackoff the pause before a poll is recorded again after the audit database refused it (offsets are
 *     not committed meanwhile, so nothing is lost)
 * @param consumer further Kafka consumer properties, e.g. {@code security.protocol}, {@code sasl.mechanism},
 *     {@code ssl.truststore.location}; they cannot override the settings above or the deserializers
 */
@ConfigurationProperties("lungflag.intake.bus")
public record BusProperties(
        @DefaultValue("false") boolean enabled,
        @DefaultValue("localhost:9092") List<String> bootstrapServers,
        @DefaultValue("fhir.observations") String topic,
        @DefaultValue("lungflag") String groupId,
        @DefaultValue("1") int concurrency,
        @DefaultValue("500") int maxPollRecords,
        @DefaultValue("earliest") String autoOffsetReset,
        @DefaultValue("5s") Duration retryBackoff,
        @DefaultValue Map<String, String> consumer) {}
