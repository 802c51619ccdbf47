package org.lungflag.sandbox.fhirserver;

import static org.assertj.core.api.Assertions.assertThat;
import static org.lungflag.sandbox.fhirserver.TestResources.PAO2;
import static org.lungflag.sandbox.fhirserver.TestResources.bloodGas;
import static org.lungflag.sandbox.fhirserver.TestResources.create;
import static org.lungflag.sandbox.fhirserver.TestResources.newPatient;

import ca.uhn.fhir.rest.client.api.IGenericClient;
import java.nio.file.Path;
import java.util.Set;
import java.util.stream.Collectors;
import org.hl7.fhir.r4.model.Observation;
import org.hl7.fhir.r4.model.Patient;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * A server on a data directory (the demo's set-up) hands its resources to the next run, and a closed server leaves
 * nothing running. Starts two servers of its own, one after the other.
 */
class FileDatabaseServerTest {

    @Test
    void nextRunOnTheSameDataDirectoryServesTheResourcesOfTheLastRun(@TempDir Path data) {
        Set<Thread> threadsBefore = liveNonDaemonThreads();
        String patientId;
        String observationId;
        try (SandboxFhirServer first =
                SandboxFhirServer.start(SandboxOptions.inMemory().withDataDirectory(data))) {
            IGenericClient client = first.fhirContext().newRestfulGenericClient(first.baseUrl());
            patientId = create(client, newPatient());
            observationId = create(client, bloodGas(patientId, PAO2, 66.0));
        }
        assertThat(liveNonDaemonThreads())
                .as("a closed server leaves no thread that keeps the JVM alive")
                .isSubsetOf(threadsBefore);

        try (SandboxFhirServer second =
                SandboxFhirServer.start(SandboxOptions.inMemory().withDataDirectory(data))) {
            IGenericClient client = second.fhirContext().newRestfulGenericClient(second.baseUrl());

            Patient patient =
                    client.read().resource(Patient.class).withUrl(patientId).execute();
            Observation observation = client.read()
                    .resource(Observation.class)
                    .withUrl(observationId)
                    .execute();

            assertThat(patient.getIdElement().toUnqualifiedVersionless().getValue())
                    .isEqualTo(patientId);
            assertThat(observation.getSubject().getReference()).isEqualTo(patientId);
            assertThat(observation.getValueQuantity().getValue()).isEqualByComparingTo("66.0");
        }
    }

    private static Set<Thread> liveNonDaemonThreads() {
        return Thread.getAllStackTraces().keySet().stream()
                .filter(thread -> thread.isAlive() && !thread.isDaemon())
                .collect(Collectors.toSet());
    }
}
