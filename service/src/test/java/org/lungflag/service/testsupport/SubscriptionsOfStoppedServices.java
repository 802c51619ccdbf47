package org.lungflag.service.testsupport;

import ca.uhn.fhir.rest.client.api.IGenericClient;
import ca.uhn.fhir.rest.client.api.ServerValidationModeEnum;
import java.io.IOException;
import java.net.InetSocketAddress;
import java.net.Socket;
import java.net.URI;
import org.hl7.fhir.r4.model.Bundle;
import org.hl7.fhir.r4.model.Subscription;
import org.junit.jupiter.api.extension.AfterAllCallback;
import org.junit.jupiter.api.extension.ExtensionContext;
import org.lungflag.sandbox.fhirserver.SandboxFhirServer;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * After each test class (and after Spring has closed that class's context), deletes from the shared sandbox FHIR
 * server the rest-hook Subscriptions whose endpoint no longer accepts connections. A stopped test service leaves its
 * Subscriptions behind; HAPI would keep retrying them on its delivery threads, and the uncaught exceptions there make
 * Awaitility fail whichever test is waiting at that moment. Registered for every class through
 * {@code META-INF/services} and {@code junit-platform.properties}; it never starts the shared server.
 */
public final class SubscriptionsOfStoppedServices implements AfterAllCallback {

    private static final Logger log = LoggerFactory.getLogger(SubscriptionsOfStoppedServices.class);

    @Override
    public void afterAll(ExtensionContext context) {
        if (context.getParent().flatMap(ExtensionContext::getParent).isPresent()) {
            return; // a @Nested class: its enclosing class cleans up once
        }
        SandboxFhirServer.sharedIfStarted().ifPresent(SubscriptionsOfStoppedServices::deleteUnreachable);
    }

    static void deleteUnreachable(SandboxFhirServer server) {
        server.fhirContext().getRestfulClientFactory().setServerValidationMode(ServerValidationModeEnum.NEVER);
        IGenericClient fhir = server.fhirContext().newRestfulGenericClient(server.baseUrl());
        Bundle page = fhir.search()
                .forResource(Subscription.class)
                .count(200)
                .returnBundle(Bundle.class)
                .execute();
        for (Bundle.BundleEntryComponent entry : page.getEntry()) {
            Subscription s = (Subscription) entry.getResource();
            String endpoint = s.getChannel().getEndpoint();
            if (endpoint != null && !accepts(endpoint)) {
                fhir.delete()
                        .resourceById(s.getIdElement().toUnqualifiedVersionless())
                        .execute();
                log.info(
                        "deleted Subscription {} of a stopped test service",
                        s.getIdElement().getIdPart());
            }
        }
    }

    private static boolean accepts(String endpoint) {
        URI uri = URI.create(endpoint);
        int port = uri.getPort() > 0 ? uri.getPort() : 80;
        try (Socket socket = new Socket()) {
            socket.connect(new InetSocketAddress(uri.getHost(), port), 500);
            return true;
        } catch (IOException e) {
            return false;
        }
    }
}
