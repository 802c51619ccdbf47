package org.lungflag.service.health;

import java.time.Clock;
import java.time.Duration;
import org.lungflag.service.evaluation.InboxProcessor;
import org.lungflag.service.intake.InboxRepository;
import org.lungflag.service.writeback.OutboxRepository;
import org.springframework.beans.factory.annotation.Value;
import org.springframework.boot.actuate.health.Health;
import org.springframework.boot.actuate.health.HealthIndicator;
import org.springframework.boot.actuate.health.Status;
import org.springframework.stereotype.Component;

/**
 * The write-back backlog: DEGRADED (a custom status, reported as 200 by default) when the oldest undelivered advisory
 * is older than {@code lungflag.health.outbox-max-age} (default 10 min), or the oldest notification not yet
 * evaluated is older than that, so an operator sees that advisories are waiting before anyone misses one. DOWN when
 * this instance should process the inbox and its processing thread is not running.
 */
@Component("writeBack")
class OutboxHealthIndicator implements HealthIndicator {

    static final Status DEGRADED = new Status("DEGRADED", "advisories are waiting to be written");

    private final OutboxRepository outbox;
    private final InboxRepository inbox;
    private final InboxProcessor processor;
    private final Clock clock;
    private final Duration maxAge;

    OutboxHealthIndicator(
            OutboxRepository outbox,
            InboxRepository inbox,
            InboxProcessor processor,
            Clock clock,
            @Value("${lungflag.health.outbox-max-age:10m}") Duration maxAge) {
        this.outbox = outbox;
        this.inbox = inbox;
        this.processor = processor;
        this.clock = clock;
        this.maxAge = maxAge;
    }

    @Override
    public Health health() {
        var backlog = outbox.backlog();
        var waiting = inbox.backlog();
        Duration age = backlog.oldestCreatedAt() == null
                ? Duration.ZERO
                : Duration.between(backlog.oldestCreatedAt(), clock.instant());
        Duration inboxAge = waiting.oldestReceivedAt() == null
                ? Duration.ZERO
                : Duration.between(waiting.oldestReceivedAt(), clock.instant());
        boolean stopped = processor.enabled() && !processor.processing();
        Health.Builder b = stopped
                ? Health.down()
                : age.compareTo(maxAge) > 0 || inboxAge.compareTo(maxAge) > 0 ? Health.status(DEGRADED) : Health.up();
        return b.withDetail("outboxBacklog", backlog.count())
                .withDetail("outboxOldestAgeSeconds", age.toSeconds())
                .withDetail("outboxMaxAgeSeconds", maxAge.toSeconds())
                .withDetail("inboxBacklog", waiting.count())
                .withDetail("inboxOldestAgeSeconds", inboxAge.toSeconds())
                .withDetail("inboxProcessor", processor.enabled() ? (stopped ? "stopped" : "running") : "disabled")
                .build();
    }
}
