package org.lungflag.service.metrics;

import org.lungflag.service.intake.CatchUpSearch;
import org.lungflag.service.intake.InboxRepository;
import org.lungflag.service.writeback.OutboxRepository;
import org.springframework.scheduling.annotation.Scheduled;
import org.springframework.stereotype.Component;

/** Refreshes the backlog and lag gauges from the store every few seconds (cheap counting queries). */
@Component
class BacklogGauges {

    private final LungflagMetrics metrics;
    private final OutboxRepository outbox;
    private final InboxRepository inbox;
    private final CatchUpSearch catchUp;

    BacklogGauges(LungflagMetrics metrics, OutboxRepository outbox, InboxRepository inbox, CatchUpSearch catchUp) {
        this.metrics = metrics;
        this.outbox = outbox;
        this.inbox = inbox;
        this.catchUp = catchUp;
    }

    @Scheduled(fixedDelayString = "${lungflag.metrics.refresh:10s}")
    void refresh() {
        try {
            var o = outbox.backlog();
            metrics.outbox(o.count(), o.oldestCreatedAt());
            metrics.inbox(inbox.backlog().count());
            metrics.catchUpWatermark(catchUp.status().watermark());
        } catch (RuntimeException e) {
            // the database is unavailable: health says so; gauges keep their last values
        }
    }
}
