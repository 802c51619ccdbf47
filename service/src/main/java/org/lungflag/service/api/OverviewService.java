package org.lungflag.service.api;

import java.time.Clock;
import java.time.Duration;
import java.time.Instant;
import org.lungflag.service.api.ApiRecords.Overview;
import org.lungflag.service.audit.QuarantineRepository;
import org.lungflag.service.evaluation.EpisodeRepository;
import org.lungflag.service.intake.CatchUpSearch;
import org.lungflag.service.intake.InboxRepository;
import org.lungflag.service.writeback.OutboxRepository;
import org.springframework.boot.actuate.health.HealthComponent;
import org.springframework.boot.actuate.health.HealthEndpoint;
import org.springframework.stereotype.Component;

/** Intake and write-back health in one record, for the console's overview and {@code GET /api/v1/overview}. */
@Component
public class OverviewService {

    private final AuditQueries queries;
    private final CatchUpSearch catchUp;
    private final InboxRepository inbox;
    private final OutboxRepository outbox;
    private final QuarantineRepository quarantine;
    private final EpisodeRepository episodes;
    private final HealthEndpoint health;
    private final Clock clock;

    OverviewService(
            AuditQueries queries,
            CatchUpSearch catchUp,
            InboxRepository inbox,
            OutboxRepository outbox,
            QuarantineRepository quarantine,
            EpisodeRepository episodes,
            HealthEndpoint health,
            Clock clock) {
        this.queries = queries;
        this.catchUp = catchUp;
        this.inbox = inbox;
        this.outbox = outbox;
        this.quarantine = quarantine;
        this.episodes = episodes;
        this.health = health;
        this.clock = clock;
    }

    public Overview overview() {
        Instant now = clock.instant();
        CatchUpSearch.Status s = catchUp.status();
        OutboxRepository.Backlog o = outbox.backlog();
        return new Overview(
                queries.lastNotification().orElse(null),
                s.watermark(),
                s.watermark() == null
                        ? null
                        : Duration.between(s.watermark(), now).toSeconds(),
                s.lastSuccessAt(),
                s.lastError(),
                inbox.backlog().count(),
                o.count(),
                o.oldestCreatedAt(),
                o.oldestCreatedAt() == null
                        ? null
                        : Duration.between(o.oldestCreatedAt(), now).toSeconds(),
                quarantine.count(),
                episodes.countActive(),
                status("fhirServer"),
                status("db"),
                status("writeBack"),
                now);
    }

    private String status(String component) {
        try {
            HealthComponent c = health.healthForPath(component);
            return c == null ? "UNKNOWN" : c.getStatus().getCode();
        } catch (RuntimeException e) {
            return "DOWN";
        }
    }
}
