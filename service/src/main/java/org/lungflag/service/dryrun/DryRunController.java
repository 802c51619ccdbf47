package org.lungflag.service.dryrun;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.parser.DataFormatException;
import java.time.Clock;
import java.time.Instant;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import org.hl7.fhir.instance.model.api.IBaseResource;
import org.hl7.fhir.r4.model.Bundle;
import org.hl7.fhir.r4.model.CodeableConcept;
import org.hl7.fhir.r4.model.Coding;
import org.hl7.fhir.r4.model.Observation;
import org.hl7.fhir.r4.model.OperationOutcome;
import org.hl7.fhir.r4.model.Patient;
import org.hl7.fhir.r4.model.Specimen;
import org.hl7.fhir.r4.model.StringType;
import org.lungflag.fhir.profiles.LungflagFhir;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.patient.Sex;
import org.lungflag.service.normalize.NormalizedResource;
import org.lungflag.service.normalize.Normalizer;
import org.lungflag.service.normalize.ObservationMapper;
import org.lungflag.service.normalize.SpecimenLookup;
import org.lungflag.service.offline.OfflineEvaluation;
import org.lungflag.service.offline.PatientRun;
import org.lungflag.service.patient.PatientFactsMapper;
import org.lungflag.service.writeback.WritebackMode;
import org.lungflag.service.writeback.WritebackProperties;
import org.springframework.http.HttpStatus;
import org.springframework.http.MediaType;
import org.springframework.http.ResponseEntity;
import org.springframework.web.bind.annotation.PostMapping;
import org.springframework.web.bind.annotation.RequestBody;
import org.springframework.web.bind.annotation.RequestParam;
import org.springframework.web.bind.annotation.RestController;

/**
 * The dry run (design.md): {@code POST /api/v1/evaluate} with a FHIR Bundle of Patients, Observations and
 * Specimens returns a Bundle of what Lungflag would write for them (Flags, their Provenance, and with {@code
 * indices=true} the derived-index Observations), plus an OperationOutcome listing every refused input with its
 * data-quality reason. Nothing is stored and nothing is written to the record.
 */
@RestController
class DryRunController {

    private static final MediaType FHIR_JSON = MediaType.parseMediaType("application/fhir+json");

    private final FhirContext fhir;
    private final Normalizer normalizer;
    private final OfflineEvaluation offline;
    private final WritebackProperties writeback;
    private final Clock clock;

    DryRunController(
            FhirContext fhir,
            Normalizer normalizer,
            OfflineEvaluation offline,
            WritebackProperties writeback,
            Clock clock) {
        this.fhir = fhir;
        this.normalizer = normalizer;
        this.offline = offline;
        this.writeback = writeback;
        this.clock = clock;
    }

    @PostMapping(
            path = "/api/v1/evaluate",
            consumes = {"application/fhir+json", "application/json"},
            produces = "application/fhir+json")
    ResponseEntity<String> evaluate(
            @RequestBody String body, @RequestParam(name = "indices", required = false) Boolean indices) {
        IBaseResource parsed;
        try {
            parsed = fhir.newJsonParser().parseResource(body);
        } catch (DataFormatException e) {
            return refusal("The body is not a parseable FHIR R4 JSON resource: " + firstLine(e.getMessage()));
        }
        if (!(parsed instanceof Bundle input)) {
            return refusal("POST /api/v1/evaluate takes a Bundle (type collection) of Patient, Observation and"
                    + " Specimen resources, not a " + parsed.fhirType() + ".");
        }
        Instant now = clock.instant();
        Map<String, PatientFacts> patients = new LinkedHashMap<>();
        Map<String, SpecimenLookup.SpecimenFacts> specimens = new LinkedHashMap<>();
        List<Observation> observations = new ArrayList<>();
        OperationOutcome outcome = new OperationOutcome();
        for (int i = 0; i < input.getEntry().size(); i++) {
            var resource = input.getEntry().get(i).getResource();
            if (resource instanceof Patient p) {
                patients.put(p.getIdElement().getIdPart(), PatientFactsMapper.from(p));
            } else if (resource instanceof Specimen s) {
                specimens.put("Specimen/" + s.getIdElement().getIdPart(), ObservationMapper.facts(s));
            } else if (resource instanceof Observation o) {
                observations.add(o);
            } else if (resource != null) {
                issue(
                        outcome,
                        "unsupported-resource-type",
                        "entry[" + i + "] is a " + resource.fhirType()
                                + "; the dry run reads Patient, Observation and Specimen.",
                        "Bundle.entry[" + i + "]");
            }
        }
        SpecimenLookup lookup = ref -> Optional.ofNullable(specimens.get(ref));
        Map<String, List<NormalizedResource>> byPatient = new LinkedHashMap<>();
        for (Observation o : observations) {
            NormalizedResource r;
            try {
                r = normalizer.normalize(o, now, lookup);
            } catch (SpecimenLookup.SpecimenUnavailable e) {
                throw new IllegalStateException("an in-memory Specimen lookup cannot be unavailable", e);
            }
            for (NormalizedResource.Refusal refusal : r.refusals()) {
                issue(
                        outcome,
                        refusal.reason().code(),
                        refusal.detail(),
                        r.source() == null ? "Observation" : r.source().unversioned());
            }
            if (r.patientId() != null) {
                byPatient.computeIfAbsent(r.patientId(), k -> new ArrayList<>()).add(r);
            }
        }
        boolean withIndices = indices != null ? indices : writeback.mode() == WritebackMode.FLAGS_AND_INDICES;
        Bundle result = new Bundle().setType(Bundle.BundleType.COLLECTION);
        for (Map.Entry<String, List<NormalizedResource>> e : byPatient.entrySet()) {
            PatientFacts facts = patients.getOrDefault(e.getKey(), new PatientFacts(e.getKey(), Sex.UNKNOWN, null));
            PatientRun run = offline.run(facts, e.getValue(), null);
            offline.toWrite(run, "dry-run", now, withIndices).forEach(result::addEntry);
        }
        if (outcome.hasIssue()) {
            result.addEntry().setResource(outcome);
        }
        return ResponseEntity.ok()
                .contentType(FHIR_JSON)
                .body(fhir.newJsonParser().encodeResourceToString(result));
    }

    private static void issue(OperationOutcome outcome, String reason, String detail, String where) {
        outcome.addIssue()
                .setSeverity(OperationOutcome.IssueSeverity.WARNING)
                .setCode(OperationOutcome.IssueType.INVALID)
                .setDetails(new CodeableConcept(new Coding(LungflagFhir.CodeSystems.DATA_QUALITY, reason, null)))
                .setDiagnostics(detail)
                .setExpression(List.of(new StringType(where)));
    }

    private ResponseEntity<String> refusal(String detail) {
        OperationOutcome oo = new OperationOutcome();
        oo.addIssue()
                .setSeverity(OperationOutcome.IssueSeverity.ERROR)
                .setCode(OperationOutcome.IssueType.INVALID)
                .setDiagnostics(detail);
        return ResponseEntity.status(HttpStatus.BAD_REQUEST)
                .contentType(FHIR_JSON)
                .body(fhir.newJsonParser().encodeResourceToString(oo));
    }

    private static String firstLine(String message) {
        if (message == null) {
            return "no detail";
        }
        int nl = message.indexOf('\n');
        return nl < 0 ? message : message.substring(0, nl);
    }
}
