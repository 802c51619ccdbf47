package org.lungflag.sandbox.fhirserver;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;
import static org.lungflag.sandbox.fhirserver.TestResources.LOINC;
import static org.lungflag.sandbox.fhirserver.TestResources.PACO2;
import static org.lungflag.sandbox.fhirserver.TestResources.PAO2;
import static org.lungflag.sandbox.fhirserver.TestResources.bloodGas;
import static org.lungflag.sandbox.fhirserver.TestResources.create;
import static org.lungflag.sandbox.fhirserver.TestResources.newPatient;

import ca.uhn.fhir.rest.api.MethodOutcome;
import ca.uhn.fhir.rest.client.api.IGenericClient;
import ca.uhn.fhir.rest.gclient.TokenClientParam;
import ca.uhn.fhir.rest.server.exceptions.InvalidRequestException;
import java.util.Date;
import java.util.List;
import java.util.UUID;
import org.hl7.fhir.instance.model.api.IBaseResource;
import org.hl7.fhir.r4.model.Bundle;
import org.hl7.fhir.r4.model.Bundle.BundleEntryComponent;
import org.hl7.fhir.r4.model.Bundle.BundleType;
import org.hl7.fhir.r4.model.Bundle.HTTPVerb;
import org.hl7.fhir.r4.model.CapabilityStatement;
import org.hl7.fhir.r4.model.Device;
import org.hl7.fhir.r4.model.Flag;
import org.hl7.fhir.r4.model.IdType;
import org.hl7.fhir.r4.model.Observation;
import org.hl7.fhir.r4.model.Provenance;
import org.hl7.fhir.r4.model.Reference;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

/**
 * The sandbox behaves like the FHIR server the advisory service talks to: it stores and reads resources, honours the
 * search parameters the service's catch-up uses, and makes conditional create in a transaction idempotent. Expected
 * behaviour comes from the FHIR R4 specification (RESTful API: create, read, search, conditional create, transaction).
 */
class SandboxFhirServerTest {

    /** The Flag identifier system of design.md's contracts. */
    private static final String EPISODE_SYSTEM = "http://lungflag.org/fhir/sid/advisory-episode";

    private static SandboxFhirServer server;
    private static IGenericClient client;

    @BeforeAll
    static void startSharedServer() {
        server = SandboxFhirServer.shared();
        client = server.fhirContext().newRestfulGenericClient(server.baseUrl());
    }

    @Test
    void baseUrlIsTheLoopbackFhirEndpointOnTheChosenPort() {
        assertThat(server.baseUrl()).isEqualTo("http://127.0.0.1:" + server.port() + "/fhir");
        assertThat(server.port()).isPositive();
    }

    @Test
    void capabilityStatementDeclaresFhirR4() {
        CapabilityStatement capabilities =
                client.capabilities().ofType(CapabilityStatement.class).execute();

        // FHIR R4 is version 4.0.1 (the R4 specification's technical version).
        assertThat(capabilities.getFhirVersion().toCode()).isEqualTo("4.0.1");
    }

    @Test
    void createdPatientAndObservationReadBackWithServerAssignedIdsAndVersions() {
        MethodOutcome patientOutcome = client.create().resource(newPatient()).execute();
        IdType patientId = (IdType) patientOutcome.getId();
        MethodOutcome observationOutcome = client.create()
                .resource(bloodGas(patientId.toUnqualifiedVersionless().getValue(), PAO2, 68.0))
                .execute();

        Observation read = client.read()
                .resource(Observation.class)
                .withId(observationOutcome.getId().getIdPart())
                .execute();

        assertThat(patientOutcome.getCreated()).isTrue();
        assertThat(read.getIdElement().getVersionIdPart()).isEqualTo("1");
        assertThat(read.getSubject().getReference())
                .isEqualTo(patientId.toUnqualifiedVersionless().getValue());
        assertThat(read.getCode().getCodingFirstRep().getCode()).isEqualTo(PAO2);
        assertThat(read.getValueQuantity().getValue()).isEqualByComparingTo("68.0");
        assertThat(read.getMeta().getLastUpdated()).isNotNull();
    }

    @Test
    void observationOfAPatientTheServerDoesNotHoldIsRefused() {
        Observation orphan = bloodGas("Patient/" + UUID.randomUUID(), PAO2, 68.0);

        assertThatThrownBy(() -> client.create().resource(orphan).execute())
                .isInstanceOf(InvalidRequestException.class)
                .hasMessageContaining("not found, specified in path: Observation.subject");
    }

    @Test
    void searchSelectsObservationsByPatientAndCode() {
        String patientA = create(client, newPatient());
        String patientB = create(client, newPatient());
        String aPaO2 = create(client, bloodGas(patientA, PAO2, 61.0));
        create(client, bloodGas(patientA, PACO2, 44.0));
        create(client, bloodGas(patientB, PAO2, 90.0));

        List<String> found = searchObservations("patient=" + patientA + "&code=" + LOINC + "|" + PAO2);

        assertThat(found).containsExactly(aPaO2);
    }

    @Test
    void searchByLastUpdatedReturnsOnlyWhatChangedAfterTheWatermark() {
        String patient = create(client, newPatient());
        String first = create(client, bloodGas(patient, PAO2, 70.0));
        String watermark = client.read()
                .resource(Observation.class)
                .withId(new IdType(first).getIdPart())
                .execute()
                .getMeta()
                .getLastUpdatedElement()
                .getValueAsString();
        String second = create(client, bloodGas(patient, PAO2, 72.0));
        String third = create(client, bloodGas(patient, PACO2, 41.0));

        List<String> after = searchObservations("patient=" + patient + "&_lastUpdated=gt" + watermark);
        List<String> fromWatermark = searchObservations("patient=" + patient + "&_lastUpdated=ge" + watermark);

        assertThat(after).containsExactlyInAnyOrder(second, third);
        assertThat(fromWatermark).containsExactlyInAnyOrder(first, second, third);
    }

    @Test
    void conditionalCreateInTransactionCreatesOnceThenReturnsTheExistingFlag() {
        String patient = create(client, newPatient());
        String device = create(client, new Device().setStatus(Device.FHIRDeviceStatus.ACTIVE));
        String episodeKey = UUID.randomUUID().toString();

        Bundle first = client.transaction()
                .withBundle(flagWithProvenance(patient, device, episodeKey))
                .execute();
        Bundle second = client.transaction()
                .withBundle(flagWithProvenance(patient, device, episodeKey))
                .execute();

        BundleEntryComponent firstFlag = first.getEntry().get(0);
        BundleEntryComponent secondFlag = second.getEntry().get(0);
        String flagId = new IdType(firstFlag.getResponse().getLocation())
                .toUnqualifiedVersionless()
                .getValue();
        assertThat(firstFlag.getResponse().getStatus()).startsWith("201");
        assertThat(secondFlag.getResponse().getStatus()).startsWith("200");
        assertThat(new IdType(secondFlag.getResponse().getLocation()).toUnqualified())
                .isEqualTo(new IdType(firstFlag.getResponse().getLocation()).toUnqualified());
        // The urn:uuid reference to the Flag resolves to the stored Flag in both transactions.
        assertThat(provenanceTarget(first.getEntry().get(1))).isEqualTo(flagId);
        assertThat(provenanceTarget(second.getEntry().get(1))).isEqualTo(flagId);
        Bundle flags = client.search()
                .forResource(Flag.class)
                .where(new TokenClientParam("identifier").exactly().systemAndCode(EPISODE_SYSTEM, episodeKey))
                .returnBundle(Bundle.class)
                .execute();
        assertThat(flags.getEntry()).hasSize(1);
    }

    private static Bundle flagWithProvenance(String patient, String device, String episodeKey) {
        String flagUrn = "urn:uuid:" + UUID.randomUUID();
        Flag flag = new Flag();
        flag.addIdentifier().setSystem(EPISODE_SYSTEM).setValue(episodeKey);
        flag.setStatus(Flag.FlagStatus.ACTIVE);
        flag.getCode().setText("sandbox test advisory");
        flag.setSubject(new Reference(patient));
        Provenance provenance = new Provenance();
        provenance.addTarget(new Reference(flagUrn));
        provenance.setRecorded(new Date());
        provenance.addAgent().setWho(new Reference(device));

        Bundle bundle = new Bundle().setType(BundleType.TRANSACTION);
        bundle.addEntry()
                .setFullUrl(flagUrn)
                .setResource(flag)
                .getRequest()
                .setMethod(HTTPVerb.POST)
                .setUrl("Flag")
                .setIfNoneExist("identifier=" + EPISODE_SYSTEM + "|" + episodeKey);
        bundle.addEntry()
                .setFullUrl("urn:uuid:" + UUID.randomUUID())
                .setResource(provenance)
                .getRequest()
                .setMethod(HTTPVerb.POST)
                .setUrl("Provenance");
        return bundle;
    }

    private static String provenanceTarget(BundleEntryComponent provenanceEntry) {
        Provenance stored = client.read()
                .resource(Provenance.class)
                .withUrl(provenanceEntry.getResponse().getLocation())
                .execute();
        return new IdType(stored.getTargetFirstRep().getReference())
                .toUnqualifiedVersionless()
                .getValue();
    }

    private static List<String> searchObservations(String query) {
        Bundle bundle = client.search()
                .byUrl("Observation?" + query)
                .returnBundle(Bundle.class)
                .execute();
        assertThat(bundle.getLink(Bundle.LINK_NEXT))
                .as("all results on one page")
                .isNull();
        return bundle.getEntry().stream()
                .map(BundleEntryComponent::getResource)
                .map(IBaseResource::getIdElement)
                .map(id -> id.toUnqualifiedVersionless().getValue())
                .toList();
    }
}
