package org.lungflag.sandbox.fhirserver;

import static org.assertj.core.api.Assertions.assertThat;
import static org.awaitility.Awaitility.await;
import static org.lungflag.sandbox.fhirserver.TestResources.LOINC;
import static org.lungflag.sandbox.fhirserver.TestResources.PACO2;
import static org.lungflag.sandbox.fhirserver.TestResources.PAO2;
import static org.lungflag.sandbox.fhirserver.TestResources.bloodGas;
import static org.lungflag.sandbox.fhirserver.TestResources.create;
import static org.lungflag.sandbox.fhirserver.TestResources.newPatient;

import ca.uhn.fhir.rest.client.api.IGenericClient;
import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import java.util.Optional;
import org.awaitility.core.ConditionTimeoutException;
import org.hl7.fhir.r4.model.IdType;
import org.hl7.fhir.r4.model.Observation;
import org.hl7.fhir.r4.model.Subscription;
import org.hl7.fhir.r4.model.Subscription.SubscriptionChannelType;
import org.hl7.fhir.r4.model.Subscription.SubscriptionStatus;
import org.junit.jupiter.api.AfterEach;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

/**
 * R4 rest-hook subscriptions on the sandbox deliver what the advisory service's intake expects: with payload
 * {@code application/fhir+json}, a {@code PUT {endpoint}/Observation/{id}} carrying the resource and each
 * {@code channel.header} verbatim (FHIR R4 Subscription resource, channel elements).
 */
class RestHookSubscriptionTest {

    private static final String CRITERIA = "Observation?code=" + LOINC + "|" + PAO2;
    private static final String AUTHORIZATION = "Bearer test-token";

    private static SandboxFhirServer server;
    private static IGenericClient client;

    private final List<IdType> subscriptions = new ArrayList<>();
    private final List<HookReceiver> receivers = new ArrayList<>();

    @BeforeAll
    static void startSharedServer() {
        server = SandboxFhirServer.shared();
        client = server.fhirContext().newRestfulGenericClient(server.baseUrl());
    }

    /** A Subscription left behind would keep sending to a closed port for a minute; remove ours. */
    @AfterEach
    void removeSubscriptionsAndReceivers() {
        subscriptions.forEach(id -> client.delete().resourceById(id).execute());
        receivers.forEach(HookReceiver::close);
    }

    @Test
    void newRestHookSubscriptionBecomesActive() {
        long createdAt = System.nanoTime();
        IdType id = createSubscription(newReceiver());

        await().atMost(Duration.ofSeconds(10)).until(() -> statusOf(id) == SubscriptionStatus.ACTIVE);

        System.out.printf(
                "Subscription %s active %d ms after create%n",
                id.getIdPart(), Duration.ofNanos(System.nanoTime() - createdAt).toMillis());
    }

    @Test
    void matchingObservationArrivesAsPutWithTheResourceAndTheChannelHeader() {
        HookReceiver receiver = newReceiver();
        awaitActive(createSubscription(receiver));
        String patient = create(client, newPatient());
        String nonMatching = create(client, bloodGas(patient, PACO2, 47.0));

        long createdAt = System.nanoTime();
        String matching = create(client, bloodGas(patient, PAO2, 58.0));

        HookReceiver.Delivery delivery = await().atMost(Duration.ofSeconds(5))
                .until(() -> deliveryFor(receiver, matching), Optional::isPresent)
                .orElseThrow();
        assertThat(delivery.method()).isEqualTo("PUT");
        assertThat(delivery.path()).isEqualTo("/hook/" + matching);
        assertThat(delivery.header("Authorization")).isEqualTo(AUTHORIZATION);
        assertThat(delivery.header("Content-Type")).startsWith("application/fhir+json");
        Observation delivered = server.fhirContext().newJsonParser().parseResource(Observation.class, delivery.body());
        assertThat(delivered.getIdElement().toUnqualifiedVersionless().getValue())
                .isEqualTo(matching);
        assertThat(delivered.getCode().getCodingFirstRep().getCode()).isEqualTo(PAO2);
        assertThat(delivered.getValueQuantity().getValue()).isEqualByComparingTo("58.0");
        // The PaCO2 Observation was stored first and does not match the criteria: it never arrives.
        await().during(Duration.ofSeconds(1))
                .atMost(Duration.ofSeconds(2))
                .until(() -> deliveryFor(receiver, nonMatching).isEmpty());

        System.out.printf(
                "Rest-hook for %s received %d ms after the create returned%n",
                matching,
                Duration.ofNanos(delivery.receivedAtNanos() - createdAt).toMillis());
    }

    @Test
    void deletedSubscriptionStopsDeliveringWhileOthersGoOn() {
        HookReceiver removed = newReceiver();
        HookReceiver kept = newReceiver();
        IdType toDelete = createSubscription(removed);
        awaitActive(toDelete);
        awaitActive(createSubscription(kept));
        String patient = create(client, newPatient());

        long deletedAt = System.nanoTime();
        client.delete().resourceById(toDelete).execute();
        subscriptions.remove(toDelete);

        // Probe until an Observation reaches the kept Subscription and not the deleted one: the delete has then been
        // through the matcher. While it is still registered, every probe reaches both.
        await().atMost(Duration.ofSeconds(20))
                .until(() -> arrivesOnlyAt(kept, removed, create(client, bloodGas(patient, PAO2, 75.0))));

        System.out.printf(
                "Deleted Subscription %s stopped delivering within %d ms%n",
                toDelete.getIdPart(),
                Duration.ofNanos(System.nanoTime() - deletedAt).toMillis());
    }

    /** True when {@code observation} reaches {@code expected} and, for a second after that, not {@code other}. */
    private static boolean arrivesOnlyAt(HookReceiver expected, HookReceiver other, String observation) {
        await().atMost(Duration.ofSeconds(5)).until(() -> deliveryFor(expected, observation), Optional::isPresent);
        try {
            await().during(Duration.ofSeconds(1))
                    .atMost(Duration.ofSeconds(2))
                    .until(() -> deliveryFor(other, observation).isEmpty());
            return true;
        } catch (ConditionTimeoutException stillDelivered) {
            return false;
        }
    }

    private HookReceiver newReceiver() {
        HookReceiver receiver = HookReceiver.start();
        receivers.add(receiver);
        return receiver;
    }

    private static void awaitActive(IdType subscription) {
        await().atMost(Duration.ofSeconds(10)).until(() -> statusOf(subscription) == SubscriptionStatus.ACTIVE);
    }

    private IdType createSubscription(HookReceiver receiver) {
        Subscription subscription = new Subscription();
        subscription.setStatus(SubscriptionStatus.REQUESTED);
        subscription.setReason("sandbox test: arterial oxygen partial pressure results");
        subscription.setCriteria(CRITERIA);
        subscription
                .getChannel()
                .setType(SubscriptionChannelType.RESTHOOK)
                .setEndpoint(receiver.endpoint())
                .setPayload("application/fhir+json")
                .addHeader("Authorization: " + AUTHORIZATION);
        IdType id = (IdType)
                client.create().resource(subscription).execute().getId().toUnqualifiedVersionless();
        subscriptions.add(id);
        return id;
    }

    private static SubscriptionStatus statusOf(IdType subscription) {
        return client.read()
                .resource(Subscription.class)
                .withId(subscription.getIdPart())
                .execute()
                .getStatus();
    }

    private static Optional<HookReceiver.Delivery> deliveryFor(HookReceiver receiver, String observationId) {
        return receiver.deliveries().stream()
                .filter(delivery -> delivery.path().endsWith("/" + observationId))
                .findFirst();
    }
}
