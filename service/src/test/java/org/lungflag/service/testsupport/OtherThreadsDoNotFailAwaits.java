package org.lungflag.service.testsupport;

import org.awaitility.Awaitility;
import org.junit.jupiter.api.extension.BeforeAllCallback;
import org.junit.jupiter.api.extension.ExtensionContext;

/**
 * Awaitility by default fails a waiting test when any thread of the JVM dies of an uncaught exception. In this suite
 * the embedded HAPI servers' subscription-delivery threads do that on their own (a delivery queued for a
 * Subscription that an earlier class deleted meets HAPI's closed listener, HAPI-2659), so whichever test happened to
 * be waiting failed for another class's leftovers ({@link SubscriptionsOfStoppedServices} removes the Subscriptions,
 * not the deliveries already queued). Lungflag's own threads catch and log their failures (the inbox thread, see
 * {@code InboxProcessorSurvivesErrorsTest}; the scheduled outbox delivery), and the tests check their effects, so
 * awaits here watch their conditions only. Registered for every class like {@link SubscriptionsOfStoppedServices}.
 */
public final class OtherThreadsDoNotFailAwaits implements BeforeAllCallback {

    @Override
    public void beforeAll(ExtensionContext context) {
        Awaitility.doNotCatchUncaughtExceptionsByDefault();
    }
}
