package org.lungflag.service.intake;

import ca.uhn.fhir.rest.client.api.IGenericClient;
import ca.uhn.fhir.rest.param.ParamPrefixEnum;
import java.time.Clock;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Date;
import java.util.List;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.concurrent.atomic.AtomicReference;
import org.hl7.fhir.r4.model.Bundle;
import org.hl7.fhir.r4.model.Coding;
import org.hl7.fhir.r4.model.Observation;
import org.lungflag.service.audit.ReceivedResourceRepository;
import org.lungflag.service.normalize.CodeMap;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;
import org.springframework.boot.context.event.ApplicationReadyEvent;
import org.springframework.context.event.EventListener;
import org.springframework.scheduling.annotation.Scheduled;
import org.springframework.stereotype.Component;

/**
 * Finds Observations the rest-hook channel missed: HAPI drops a notification after about 60 s of failed deliveries
 * and keeps the Subscription active, so Lungflag searches {@code _lastUpdated} past a persisted watermark at
 * start-up and every {@code lungflag.intake.catch-up-interval}. Results go through the same inbox; intake is
 * idempotent on id + version, so overlap is harmless.
 */
@Component
public class CatchUpSearch {

    private static final Logger log = LoggerFactory.getLogger(CatchUpSearch.class);
    static final String WATERMARK = "catch-up:Observation";
    private static final int PAGE_SIZE = 200;

    private final IGenericClient client;
    private final CodeMap codes;
    private final InboxRepository inbox;
    private final InboxSignal signal;
    private final ReceivedResourceRepository received;
    private final WatermarkRepository watermarks;
    private final IntakeProperties properties;
    private final Clock clock;
    private final AtomicBoolean requested = new AtomicBoolean(true);
    private final AtomicBoolean running = new AtomicBoolean(false);
    private final AtomicReference<Status> status = new AtomicReference<>(new Status(null, null, null, 0, null));

    /**
     * @param lastAttemptAt when a search last started
     * @param lastSuccessAt when a search last completed
     * @param watermark the persisted position
     * @param lastQueued how many resources the last search queued
     * @param lastError a short error description of the last failed search, or {@code null}
     */
    public record Status(
            Instant lastAttemptAt, Instant lastSuccessAt, Instant watermark, int lastQueued, String lastError) {}

    CatchUpSearch(
            IGenericClient client,
            CodeMap codes,
            InboxRepository inbox,
            InboxSignal signal,
            ReceivedResourceRepository received,
            WatermarkRepository watermarks,
            IntakeProperties properties,
            Clock clock) {
        this.client = client;
        this.codes = codes;
        this.inbox = inbox;
        this.signal = signal;
        this.received = received;
        this.watermarks = watermarks;
        this.properties = properties;
        this.clock = clock;
    }

    /** Asks for a search at the next tick (e.g. after a ping or a heartbeat). */
    public void requestSoon() {
        requested.set(true);
    }

    public Status status() {
        return status.get();
    }

    @EventListener(ApplicationReadyEvent.class)
    void onStart() {
        requested.set(true);
    }

    /** Runs when requested, and at least every catch-up interval. */
    @Scheduled(fixedDelayString = "${lungflag.intake.catch-up-tick:1s}")
    void tick() {
        Status s = status.get();
        boolean due = s.lastAttemptAt() == null
                || s.lastAttemptAt().plus(properties.catchUpInterval()).isBefore(clock.instant());
        if (requested.getAndSet(false) || due) {
            runOnce();
        }
    }

    /** One catch-up pass. Returns how many resources were queued. Safe to call concurrently (runs once). */
    public int runOnce() {
        if (!running.compareAndSet(false, true)) {
            return 0;
        }
        Instant started = clock.instant();
        Instant mark = watermarks.get(WATERMARK).orElse(started.minus(properties.catchUpInitialLookBack()));
        try {
            int queued = search(mark.minus(properties.catchUpOverlap()));
            status.set(new Status(
                    started, clock.instant(), watermarks.get(WATERMARK).orElse(mark), queued, null));
            if (queued > 0) {
                log.info("catch-up search queued {} Observation versions", queued);
                signal.recorded();
            }
            return queued;
        } catch (RuntimeException e) {
            Status previous = status.get();
            status.set(new Status(
                    started, previous.lastSuccessAt(), mark, 0, e.getClass().getSimpleName()));
            log.warn(
                    "catch-up search failed ({}); it runs again in {}",
                    e.getClass().getSimpleName(),
                    properties.catchUpInterval());
            return 0;
        } finally {
            running.set(false);
        }
    }

    private int search(Instant since) {
        List<Coding> codings = new ArrayList<>();
        for (String key : codes.codings()) {
            int bar = key.indexOf('|');
            codings.add(new Coding(key.substring(0, bar), key.substring(bar + 1), null));
        }
        Bundle page = client.search()
                .forResource(Observation.class)
                .where(Observation.CODE.exactly().codings(codings.toArray(Coding[]::new)))
                .lastUpdated(new ca.uhn.fhir.rest.param.DateRangeParam()
                        .setLowerBound(new ca.uhn.fhir.rest.param.DateParam(
                                ParamPrefixEnum.GREATERTHAN_OR_EQUALS, Date.from(since))))
                .sort()
                .ascending("_lastUpdated")
                .count(PAGE_SIZE)
                // a server that reuses recent search results (HAPI: 60 s by default) must search afresh
                .cacheControl(new ca.uhn.fhir.rest.api.CacheControlDirective().setNoCache(true))
                .returnBundle(Bundle.class)
                .execute();
        int queued = 0;
        Instant highest = null;
        Instant serverTime = page.getMeta().hasLastUpdated()
                ? page.getMeta().getLastUpdated().toInstant()
                : null;
        while (page != null) {
            for (Bundle.BundleEntryComponent entry : page.getEntry()) {
                if (!(entry.getResource() instanceof Observation obs)) {
                    continue;
                }
                String id = obs.getIdElement().getIdPart();
                String version = obs.getMeta().getVersionId();
                if (version == null) {
                    version = obs.getIdElement().getVersionIdPart();
                }
                Instant updated = obs.getMeta().hasLastUpdated()
                        ? obs.getMeta().getLastUpdated().toInstant()
                        : null;
                if (updated != null && (highest == null || updated.isAfter(highest))) {
                    highest = updated;
                }
                if (received.seen("Observation", id, version) || inbox.isPending("Observation", id, version)) {
                    continue;
                }
                inbox.add(
                        "Observation",
                        id,
                        version,
                        InboxChannel.CATCH_UP,
                        client.getFhirContext().newJsonParser().encodeResourceToString(obs));
                queued++;
            }
            if (highest != null) {
                watermarks.advance(WATERMARK, highest);
            }
            page = page.getLink(Bundle.LINK_NEXT) != null
                    ? client.loadPage().next(page).execute()
                    : null;
        }
        if (highest == null && serverTime != null) {
            // nothing changed since the mark: everything up to the server's search time has been seen (the
            // server's clock, not ours, so clock skew between the two cannot skip a resource)
            watermarks.advance(WATERMARK, serverTime);
        }
        return queued;
    }
}
