package org.lungflag.service.intake;

import ca.uhn.fhir.rest.api.CacheControlDirective;
import ca.uhn.fhir.rest.client.api.IGenericClient;
import java.net.URI;
import java.util.ArrayList;
import java.util.HashSet;
import java.util.List;
import java.util.Set;
import java.util.concurrent.atomic.AtomicBoolean;
import org.hl7.fhir.r4.model.Bundle;
import org.hl7.fhir.r4.model.StringType;
import org.hl7.fhir.r4.model.Subscription;
import org.lungflag.fhir.profiles.LungflagFhir;
import org.lungflag.service.conformance.ConformancePackage;
import org.lungflag.service.normalize.CodeMap;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;
import org.springframework.scheduling.annotation.Scheduled;
import org.springframework.stereotype.Component;

/**
 * Makes sure the FHIR server has Lungflag's rest-hook Subscriptions: the conformance package's templates
 * (blood gas, bedside, body measures; R4 criteria are one search URL with {@code code=a,b,c} as OR) with this
 * service's endpoint and token, plus one for codes the site ConceptMap adds. Idempotent: it finds its
 * Subscriptions by template tag and endpoint, creates what is missing and repairs what differs (criteria, header,
 * status, payload). It retries until the server answers, because the server may start after Lungflag.
 */
@Component
public class SubscriptionRegistrar {

    private static final Logger log = LoggerFactory.getLogger(SubscriptionRegistrar.class);
    static final String PAYLOAD = "application/fhir+json";

    private final IGenericClient client;
    private final ConformancePackage conformance;
    private final CodeMap codes;
    private final HookToken token;
    private final IntakeProperties properties;
    private final RegistrationLock lock;
    private final AtomicBoolean done = new AtomicBoolean(false);

    SubscriptionRegistrar(
            IGenericClient client,
            ConformancePackage conformance,
            CodeMap codes,
            HookToken token,
            IntakeProperties properties,
            RegistrationLock lock) {
        this.lock = lock;
        this.client = client;
        this.conformance = conformance;
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
            // several instances behind one public URL share one set of Subscriptions: one registers at a time
            lock.holding("subscriptions:" + endpoint(), this::ensure);
            done.set(true);
        } catch (RuntimeException e) {
            log.warn(
                    "could not register Subscriptions on the FHIR server yet ({}); retrying",
                    e.getClass().getSimpleName());
        }
    }

    /** The Subscription templates of the conformance package that the live service uses. */
    static final List<String> TEMPLATES = List.of(
            LungflagFhir.PackageFiles.SUBSCRIPTION_BLOOD_GAS,
            LungflagFhir.PackageFiles.SUBSCRIPTION_BEDSIDE,
            LungflagFhir.PackageFiles.SUBSCRIPTION_BODY_MEASURES);

    static final String SITE_TEMPLATE = "lungflag-site-codes";

    /** Creates or repairs the Subscriptions. Returns the ids of Lungflag's Subscriptions. */
    public List<String> ensure() {
        List<String> ids = new ArrayList<>();
        for (Subscription wanted : wanted()) {
            String tag = wanted.getMeta().getTag().get(0).getCode();
            Bundle found = client.search()
                    .forResource(Subscription.class)
                    .withTag(LungflagFhir.CodeSystems.SUBSCRIPTION_TEMPLATE, tag)
                    .where(Subscription.URL.matches().value(endpoint()))
                    .count(10)
                    .cacheControl(new CacheControlDirective().setNoCache(true)) // not a result cached before a create
                    .returnBundle(Bundle.class)
                    .execute();
            Subscription current = found.getEntry().stream()
                    .map(Bundle.BundleEntryComponent::getResource)
                    .filter(Subscription.class::isInstance)
                    .map(Subscription.class::cast)
                    .filter(sub -> endpoint().equals(sub.getChannel().getEndpoint()))
                    .findFirst()
                    .orElse(null);
            if (current == null) {
                var outcome = client.create().resource(wanted).execute();
                ids.add(outcome.getId().getIdPart());
                log.info("registered Subscription {} ({})", outcome.getId().getIdPart(), tag);
            } else if (!matches(current) || !wanted.getCriteria().equals(current.getCriteria())) {
                wanted.setId(current.getIdElement().toUnqualifiedVersionless());
                client.update().resource(wanted).execute();
                ids.add(current.getIdElement().getIdPart());
                log.info("repaired Subscription {} ({})", current.getIdElement().getIdPart(), tag);
            } else {
                ids.add(current.getIdElement().getIdPart());
            }
        }
        return ids;
    }

    /** The package's templates with this service's endpoint and token, plus one for site-mapped codes. */
    List<Subscription> wanted() {
        List<Subscription> out = new ArrayList<>();
        Set<String> covered = new HashSet<>();
        for (String file : TEMPLATES) {
            Subscription s = conformance.resource(file, Subscription.class);
            s.setId((String) null);
            s.getChannel().setEndpoint(endpoint()).setHeader(List.of(new StringType(token.subscriptionHeader())));
            String criteria = s.getCriteria();
            covered.addAll(
                    List.of(criteria.substring(criteria.indexOf("code=") + 5).split(",")));
            out.add(s);
        }
        List<String> extra =
                codes.codings().stream().filter(c -> !covered.contains(c)).toList();
        if (!extra.isEmpty()) {
            Subscription site =
                    conformance.resource(LungflagFhir.PackageFiles.SUBSCRIPTION_BEDSIDE, Subscription.class);
            site.setId((String) null);
            site.getMeta().getTag().clear();
            site.getMeta().addTag(LungflagFhir.CodeSystems.SUBSCRIPTION_TEMPLATE, SITE_TEMPLATE, null);
            site.setReason("Lungflag advisory service: inputs mapped by the site ConceptMap.");
            site.setCriteria("Observation?code=" + String.join(",", extra));
            site.getChannel().setEndpoint(endpoint()).setHeader(List.of(new StringType(token.subscriptionHeader())));
            out.add(site);
        }
        return out;
    }

    /** The criteria of every Subscription Lungflag wants. */
    public List<String> criteria() {
        return wanted().stream().map(Subscription::getCriteria).toList();
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
}
