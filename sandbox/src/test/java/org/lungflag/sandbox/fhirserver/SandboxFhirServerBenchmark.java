package org.lungflag.sandbox.fhirserver;

import static org.awaitility.Awaitility.await;
import static org.lungflag.sandbox.fhirserver.TestResources.LOINC;
import static org.lungflag.sandbox.fhirserver.TestResources.PAO2;
import static org.lungflag.sandbox.fhirserver.TestResources.bloodGas;
import static org.lungflag.sandbox.fhirserver.TestResources.create;
import static org.lungflag.sandbox.fhirserver.TestResources.newPatient;

import ca.uhn.fhir.rest.client.api.IGenericClient;
import java.lang.management.ManagementFactory;
import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Optional;
import org.hl7.fhir.r4.model.CapabilityStatement;
import org.hl7.fhir.r4.model.IdType;
import org.hl7.fhir.r4.model.Subscription;
import org.junit.jupiter.api.Tag;
import org.junit.jupiter.api.Test;

/**
 * Prints the sandbox's figures; asserts nothing. Run alone so that the start is cold:
 *
 * <pre>./mvnw -B -pl sandbox test -Dgroups=benchmark -Dsandbox.excludedGroups=none</pre>
 */
@Tag("benchmark")
class SandboxFhirServerBenchmark {

    private static final int DELIVERIES = 20;

    @Test
    void printStartTimeHeapAndRestHookLatency() {
        long jvmUptimeAtStart = ManagementFactory.getRuntimeMXBean().getUptime();
        try (SandboxFhirServer server = SandboxFhirServer.start(SandboxOptions.inMemory());
                HookReceiver receiver = HookReceiver.start()) {
            print("JVM uptime before start", jvmUptimeAtStart + " ms");
            print(
                    "start (context + Tomcat + servlet init)",
                    server.startupTime().toMillis() + " ms");
            System.gc();
            long heapUsed =
                    ManagementFactory.getMemoryMXBean().getHeapMemoryUsage().getUsed();
            long heapMax = Runtime.getRuntime().maxMemory();
            print("heap used after start and a full GC", mebibytes(heapUsed) + " of max " + mebibytes(heapMax));

            IGenericClient client = server.fhirContext().newRestfulGenericClient(server.baseUrl());
            long metadataStart = System.nanoTime();
            client.capabilities().ofType(CapabilityStatement.class).execute();
            print("first GET /metadata", millisSince(metadataStart) + " ms");

            Subscription subscription = new Subscription();
            subscription.setStatus(Subscription.SubscriptionStatus.REQUESTED);
            subscription.setReason("benchmark");
            subscription.setCriteria("Observation?code=" + LOINC + "|" + PAO2);
            subscription
                    .getChannel()
                    .setType(Subscription.SubscriptionChannelType.RESTHOOK)
                    .setEndpoint(receiver.endpoint())
                    .setPayload("application/fhir+json");
            long subscribeStart = System.nanoTime();
            IdType subscriptionId = (IdType)
                    client.create().resource(subscription).execute().getId().toUnqualifiedVersionless();
            await().atMost(Duration.ofSeconds(30))
                    .until(() -> client.read()
                                    .resource(Subscription.class)
                                    .withId(subscriptionId.getIdPart())
                                    .execute()
                                    .getStatus()
                            == Subscription.SubscriptionStatus.ACTIVE);
            print("Subscription create -> active", millisSince(subscribeStart) + " ms");

            String patient = create(client, newPatient());
            List<Long> latencies = new ArrayList<>();
            for (int i = 0; i < DELIVERIES; i++) {
                long createStart = System.nanoTime();
                String observation = create(client, bloodGas(patient, PAO2, 60.0 + i));
                HookReceiver.Delivery delivery = await().atMost(Duration.ofSeconds(30))
                        .until(
                                () -> receiver.deliveries().stream()
                                        .filter(d -> d.path().endsWith("/" + observation))
                                        .findFirst(),
                                Optional::isPresent)
                        .orElseThrow();
                latencies.add(Duration.ofNanos(delivery.receivedAtNanos() - createStart)
                        .toMillis());
            }
            latencies.sort(Long::compare);
            print(
                    "create -> rest-hook received, " + DELIVERIES + " in a row",
                    String.format(
                            Locale.ROOT,
                            "min %d, median %d, p90 %d, max %d ms",
                            latencies.get(0),
                            latencies.get(DELIVERIES / 2),
                            latencies.get(DELIVERIES * 9 / 10),
                            latencies.get(DELIVERIES - 1)));
            client.delete().resourceById(subscriptionId).execute();
        }
    }

    private static void print(String what, String figure) {
        System.out.printf(Locale.ROOT, "[sandbox benchmark] %-45s %s%n", what, figure);
    }

    private static long millisSince(long startNanos) {
        return Duration.ofNanos(System.nanoTime() - startNanos).toMillis();
    }

    private static String mebibytes(long bytes) {
        return (bytes / (1024 * 1024)) + " MiB";
    }
}
