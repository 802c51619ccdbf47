package org.lungflag.service.intake;

import ca.uhn.fhir.rest.client.api.IGenericClient;
import java.net.URI;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.concurrent.atomic.AtomicBoolean;
import org.hl7.fhir.r4.model.Bundle;
import org.hl7.fhir.r4.model.StringType;
import org.hl7.fhir.r4.model.Subscription;
import org.lungflag.service.normalize.CodeMap;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;
import org.springframework.scheduling.annotation.Scheduled;
import org.springframework.stereotype.Component;

/**
 * Makes sure the FHIR server has Lungflag's rest-hook Subscriptions (one per code system of the input codes:
 * R4 criteria are one search URL, with {@code code=a,b,c} as OR). Idempotent: it finds its Subscriptions by
 * endpoint and criteria, creates what is missing and repairs what differs (header, status, payload). It retries
 * until the server answers, because the server may start after Lungflag.
 */
@Component
public class SubscriptionRegistrar {

    private static final Logger log = LoggerFactory.getLogger(SubscriptionRegistrar.class);
    static final String PAYLOAD = "application/fhir+json";
    static final String REASON = "Lungflag: respiratory advisories from blood gases and ventilator data";

    private final IGenericClient client;
    private final CodeMap codes;
    private final HookToken token;
    private final IntakeProperties properties;
    private final AtomicBoolean done = new AtomicBoolean(false);

    SubscriptionRegistrar(IGenericClient client, CodeMap codes, HookToken token, IntakeProperties properties) {
        this.client = client;
        this.codes = codes;
        this.token = token;
        this.properties = properties;
        if (properties.registerSubscriptions() && properties.publicUrl() == null) {
            log.warn("lungflag.intake.public-url is not set: Lungflag cannot register its Subscriptions and relies on"
                    + " the catch-up search alone");
        }
    }

    public boolean registered() {
        return done.get();
    }

    /** The endpoint the Subscriptions deliver to. */
    public String endpoint() {
        URI base = properties.publicUrl();
        String s = base.toString();
        return (s.endsWith("/") ? s.substring(0, s.length() - 1) : s) + "/fhir-hook";
    }

    @Scheduled(initialDelay = 0, fixedDelayString = "${lungflag.intake.subscription-retry:15s}")
    void ensureUntilDone() {
        if (done.get() || !properties.registerSubscriptions() || properties.publicUrl() == null) {
            return;
        }
        try {
            ensure();
            done.set(true);
        } catch (RuntimeException e) {
            log.warn(
                    "could not register Subscriptions on the FHIR server yet ({}); retrying",
                    e.getClass().getSimpleName());
        }
    }

    /** Creates or repairs the Subscriptions. Returns the ids of Lungflag's Subscriptions. */
    public List<String> ensure() {
        List<String> ids = new ArrayList<>();
        Map<String, Subscription> existing = new LinkedHashMap<>();
        Bundle found = client.search()
                .forResource(Subscription.class)
                .where(Subscription.URL.matches().value(endpoint()))
                .count(100)
                .returnBundle(Bundle.class)
                .execute();
        for (Bundle.BundleEntryComponent e : found.getEntry()) {
            if (e.getResource() instanceof Subscription s) {
                existing.put(s.getCriteria(), s);
            }
        }
        for (String criteria : criteria()) {
            Subscription current = existing.get(criteria);
            if (current == null) {
                var outcome = client.create().resource(template(criteria)).execute();
                ids.add(outcome.getId().getIdPart());
                log.info("registered Subscription {} for {}", outcome.getId().getIdPart(), system(criteria));
            } else if (!matches(current)) {
                Subscription repaired = template(criteria);
                repaired.setId(current.getIdElement().toUnqualifiedVersionless());
                client.update().resource(repaired).execute();
                ids.add(current.getIdElement().getIdPart());
                log.info("repaired Subscription {}", current.getIdElement().getIdPart());
            } else {
                ids.add(current.getIdElement().getIdPart());
            }
        }
        return ids;
    }

    /** One criteria string per code system, e.g. {@code Observation?code=http://loinc.org|2703-7,...}. */
    public List<String> criteria() {
        Map<String, List<String>> bySystem = new LinkedHashMap<>();
        for (String key : codes.codings()) {
            int bar = key.indexOf('|');
            bySystem.computeIfAbsent(key.substring(0, bar), k -> new ArrayList<>())
                    .add(key);
        }
        List<String> out = new ArrayList<>();
        bySystem.values().forEach(list -> out.add("Observation?code=" + String.join(",", list)));
        return out;
    }

    private Subscription template(String criteria) {
        Subscription s = new Subscription();
        s.setStatus(Subscription.SubscriptionStatus.REQUESTED);
        s.setReason(REASON);
        s.setCriteria(criteria);
        s.getChannel()
                .setType(Subscription.SubscriptionChannelType.RESTHOOK)
                .setEndpoint(endpoint())
                .setPayload(PAYLOAD)
                .setHeader(List.of(new StringType(token.subscriptionHeader())));
        return s;
    }

    private boolean matches(Subscription s) {
        boolean header = s.getChannel().getHeader().stream()
                .anyMatch(h -> token.subscriptionHeader().equals(h.getValue()));
        boolean status = s.getStatus() == Subscription.SubscriptionStatus.ACTIVE
                || s.getStatus() == Subscription.SubscriptionStatus.REQUESTED;
        return header
                && status
                && PAYLOAD.equals(s.getChannel().getPayload())
                && s.getChannel().getType() == Subscription.SubscriptionChannelType.RESTHOOK;
    }

    private static String system(String criteria) {
        int start = "Observation?code=".length();
        int bar = criteria.indexOf('|', start);
        return bar < 0 ? criteria : criteria.substring(start, bar);
    }
}
