package org.lungflag.service.metrics;

import io.micrometer.core.instrument.Counter;
import io.micrometer.core.instrument.Gauge;
import io.micrometer.core.instrument.MeterRegistry;
import io.micrometer.core.instrument.Timer;
import java.time.Clock;
import java.time.Duration;
import java.time.Instant;
import java.util.concurrent.ConcurrentHashMap;
import java.util.concurrent.ConcurrentMap;
import java.util.concurrent.atomic.AtomicLong;
import org.springframework.stereotype.Component;

/**
 * The service's own metrics (Micrometer, exposed at {@code /actuator/prometheus}): what was received and refused,
 * what was evaluated and decided, how the write-back is doing, and how far the catch-up search lags. Tags carry
 * codes only (channel, reason code, rule id, outcome), never patient data.
 */
@Component
public class LungflagMetrics {

    private final MeterRegistry registry;
    private final Clock clock;
    private final ConcurrentMap<String, Counter> counters = new ConcurrentHashMap<>();
    private final AtomicLong outboxBacklog = new AtomicLong();
    private final AtomicLong outboxOldestAgeSeconds = new AtomicLong();
    private final AtomicLong inboxBacklog = new AtomicLong();
    private final AtomicLong catchUpWatermarkEpochSecond = new AtomicLong();
    private final Timer fhirWrite;
    private final Timer receiptToCommit;

    public LungflagMetrics(MeterRegistry registry, Clock clock) {
        this.registry = registry;
        this.clock = clock;
        Gauge.builder("lungflag.outbox.backlog", outboxBacklog, AtomicLong::get)
                .description("Outbox rows waiting or in flight")
                .register(registry);
        Gauge.builder("lungflag.outbox.oldest.age", outboxOldestAgeSeconds, AtomicLong::get)
                .baseUnit("seconds")
                .description("Age of the oldest undelivered outbox row")
                .register(registry);
        Gauge.builder("lungflag.inbox.backlog", inboxBacklog, AtomicLong::get)
                .description("Inbox rows not yet processed")
                .register(registry);
        Gauge.builder(
                        "lungflag.catchup.lag",
                        catchUpWatermarkEpochSecond,
                        v -> v.get() == 0 ? Double.NaN : clock.instant().getEpochSecond() - v.get())
                .baseUnit("seconds")
                .description("How far the catch-up search's watermark is behind now")
                .register(registry);
        this.fhirWrite = Timer.builder("lungflag.fhir.write")
                .description("FHIR transaction writes of the outbox deliverer")
                .publishPercentileHistogram()
                .register(registry);
        this.receiptToCommit = Timer.builder("lungflag.intake.receipt.to.commit")
                .description("From receipt of a resource to the commit of its evaluations")
                .publishPercentiles(0.5, 0.99)
                .register(registry);
    }

    private Counter counter(String name, String description, String... tags) {
        String key = name + String.join(",", tags);
        return counters.computeIfAbsent(
                key,
                k -> Counter.builder(name).description(description).tags(tags).register(registry));
    }

    public void received(String channel) {
        counter("lungflag.intake.received", "Resources received", "channel", channel)
                .increment();
    }

    public void rejected(String stage, String reasonCode) {
        counter("lungflag.rejected", "Inputs and outputs refused", "stage", stage, "reason", reasonCode)
                .increment();
    }

    public void evaluated(String ruleId, String outcome) {
        counter("lungflag.evaluations", "Rule evaluations", "rule", ruleId, "outcome", outcome)
                .increment();
    }

    public void advisory(String ruleId, String decision) {
        counter("lungflag.advisories", "Advisory decisions queued for write-back", "rule", ruleId, "decision", decision)
                .increment();
    }

    public void fhirWrite(Duration took, boolean ok, String kind) {
        fhirWrite.record(took);
        if (!ok) {
            counter("lungflag.fhir.write.errors", "Failed FHIR writes", "kind", kind)
                    .increment();
        }
    }

    public void committed(Instant receivedAt) {
        if (receivedAt != null) {
            receiptToCommit.record(Duration.between(receivedAt, clock.instant()));
        }
    }

    public void outbox(long backlog, Instant oldest) {
        outboxBacklog.set(backlog);
        outboxOldestAgeSeconds.set(
                oldest == null ? 0 : Duration.between(oldest, clock.instant()).toSeconds());
    }

    public void inbox(long backlog) {
        inboxBacklog.set(backlog);
    }

    public void catchUpWatermark(Instant watermark) {
        if (watermark != null) {
            catchUpWatermarkEpochSecond.set(watermark.getEpochSecond());
        }
    }
}
