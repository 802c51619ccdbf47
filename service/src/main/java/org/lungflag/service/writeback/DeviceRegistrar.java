package org.lungflag.service.writeback;

import ca.uhn.fhir.rest.client.api.IGenericClient;
import java.util.concurrent.atomic.AtomicBoolean;
import org.hl7.fhir.r4.model.Device;
import org.lungflag.fhir.profiles.LungflagFhir;
import org.lungflag.service.conformance.ConformancePackage;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;
import org.springframework.scheduling.annotation.Scheduled;
import org.springframework.stereotype.Component;

/**
 * Makes sure the software Device every Flag and Provenance names as author and agent ({@code Device/lungflag},
 * from the conformance package) exists on the FHIR server: an update with a client-assigned id, idempotent,
 * retried until the server answers.
 */
@Component
public class DeviceRegistrar {

    private static final Logger log = LoggerFactory.getLogger(DeviceRegistrar.class);

    private final IGenericClient client;
    private final ConformancePackage conformance;
    private final AtomicBoolean done = new AtomicBoolean(false);

    DeviceRegistrar(IGenericClient client, ConformancePackage conformance) {
        this.client = client;
        this.conformance = conformance;
    }

    public boolean registered() {
        return done.get();
    }

    @Scheduled(initialDelay = 0, fixedDelayString = "${lungflag.intake.subscription-retry:15s}")
    void ensureUntilDone() {
        if (done.get()) {
            return;
        }
        try {
            ensure();
        } catch (RuntimeException e) {
            log.warn(
                    "could not register the Lungflag Device on the FHIR server yet ({}); retrying",
                    e.getClass().getSimpleName());
        }
    }

    public void ensure() {
        Device device = conformance.resource(LungflagFhir.PackageFiles.DEVICE, Device.class);
        device.setId("Device/lungflag");
        client.update().resource(device).execute();
        done.set(true);
    }
}
