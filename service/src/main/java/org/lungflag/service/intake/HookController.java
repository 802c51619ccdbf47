package org.lungflag.service.intake;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.parser.DataFormatException;
import ca.uhn.fhir.parser.IParser;
import jakarta.servlet.http.HttpServletRequest;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.InputStream;
import java.nio.charset.StandardCharsets;
import org.hl7.fhir.instance.model.api.IBaseResource;
import org.hl7.fhir.r4.model.Bundle;
import org.hl7.fhir.r4.model.Observation;
import org.hl7.fhir.r4.model.Parameters;
import org.hl7.fhir.r4.model.Reference;
import org.lungflag.rules.quality.DataQualityReason;
import org.lungflag.service.audit.QuarantineRepository;
import org.lungflag.service.audit.QuarantineRepository.Refusal;
import org.lungflag.service.audit.QuarantineStage;
import org.lungflag.service.normalize.ObservationMapper;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;
import org.springframework.dao.DataAccessException;
import org.springframework.http.HttpStatus;
import org.springframework.http.MediaType;
import org.springframework.http.ResponseEntity;
import org.springframework.transaction.TransactionException;
import org.springframework.web.bind.annotation.DeleteMapping;
import org.springframework.web.bind.annotation.PathVariable;
import org.springframework.web.bind.annotation.PostMapping;
import org.springframework.web.bind.annotation.PutMapping;
import org.springframework.web.bind.annotation.RestController;

/**
 * The rest-hook receiver (design.md): {@code PUT /fhir-hook/Observation/{id}} with the resource as payload, {@code
 * POST /fhir-hook} as an empty ping or an R4 backport notification Bundle, and {@code DELETE
 * /fhir-hook/Observation/{id}}. It acknowledges only after the notification is durably recorded in the inbox and
 * never evaluates on the caller's thread. The bearer token is checked by {@link HookAuthenticationFilter} first.
 */
@RestController
class HookController {

    private static final Logger log = LoggerFactory.getLogger(HookController.class);
    private static final MediaType FHIR_JSON = MediaType.parseMediaType("application/fhir+json");

    private final FhirContext fhirContext;
    private final InboxRepository inbox;
    private final InboxSignal signal;
    private final QuarantineRepository quarantine;
    private final IntakeProperties properties;
    private final CatchUpSearch catchUp;
    private final InboxGroupWriter groupWriter;

    HookController(
            FhirContext fhirContext,
            InboxRepository inbox,
            InboxGroupWriter groupWriter,
            InboxSignal signal,
            QuarantineRepository quarantine,
            IntakeProperties properties,
            CatchUpSearch catchUp) {
        this.fhirContext = fhirContext;
        this.inbox = inbox;
        this.groupWriter = groupWriter;
        this.signal = signal;
        this.quarantine = quarantine;
        this.properties = properties;
        this.catchUp = catchUp;
    }

    @PutMapping("/fhir-hook/Observation/{id}")
    ResponseEntity<String> observation(@PathVariable("id") String pathId, HttpServletRequest request) {
        if (!ObservationMapper.isFhirId(pathId)) {
            // not stored as an id (it may be anything); the entry keeps an excerpt of the body instead
            String body;
            try {
                body = readBounded(request);
            } catch (IOException e) {
                body = null;
            }
            return quarantineAndRefuse(
                    "Observation",
                    null,
                    null,
                    DataQualityReason.MALFORMED_RESOURCE,
                    "The rest-hook path's Observation id is not a valid FHIR id (1 to 64 of A-Z, a-z, 0-9, '-' and"
                            + " '.').",
                    body);
        }
        String body;
        try {
            body = readBounded(request);
        } catch (BodyTooLarge e) {
            // recorded (without the body) so the quality team sees it, not only the sender
            return quarantineAndRefuse(
                    HttpStatus.PAYLOAD_TOO_LARGE,
                    "too-costly",
                    "Observation",
                    pathId,
                    null,
                    DataQualityReason.MALFORMED_RESOURCE,
                    "The rest-hook body for Observation/" + pathId + " was not read: " + e.getMessage(),
                    null);
        } catch (IOException e) {
            return refusal(HttpStatus.BAD_REQUEST, "structure", "The request body could not be read.");
        }
        IBaseResource resource;
        try {
            resource = parser().parseResource(body);
        } catch (DataFormatException | ClassCastException e) {
            return quarantineAndRefuse(
                    "Observation",
                    pathId,
                    null,
                    DataQualityReason.MALFORMED_RESOURCE,
                    "The rest-hook body for Observation/" + pathId + " is not a parseable FHIR R4 JSON resource: "
                            + firstLine(e.getMessage()),
                    body);
        }
        if (!(resource instanceof Observation observation)) {
            return quarantineAndRefuse(
                    resource.fhirType(),
                    resource.getIdElement().getIdPart(),
                    resource.getIdElement().getVersionIdPart(),
                    DataQualityReason.UNSUPPORTED_RESOURCE_TYPE,
                    "The rest-hook path names Observation/" + pathId + " but the body is a " + resource.fhirType()
                            + ".",
                    body);
        }
        String bodyId = observation.getIdElement().getIdPart();
        String version = observation.getIdElement().getVersionIdPart();
        if (version == null && observation.getMeta().hasVersionId()) {
            version = observation.getMeta().getVersionId();
        }
        if (version != null && !ObservationMapper.isFhirId(version)) {
            return quarantineAndRefuse(
                    "Observation",
                    pathId,
                    null,
                    DataQualityReason.MALFORMED_RESOURCE,
                    "The rest-hook body for Observation/" + pathId
                            + " has a version id that is not a valid FHIR id (1 to 64 of A-Z, a-z, 0-9, '-' and '.').",
                    body);
        }
        if (bodyId != null && !bodyId.equals(pathId)) {
            return quarantineAndRefuse(
                    "Observation",
                    pathId,
                    version,
                    DataQualityReason.MALFORMED_RESOURCE,
                    "The rest-hook path names Observation/" + pathId + " but the body's id is " + bodyId + ".",
                    body);
        }
        return record("Observation", pathId, version, InboxChannel.REST_HOOK, body);
    }

    @DeleteMapping("/fhir-hook/Observation/{id}")
    ResponseEntity<String> deleted(@PathVariable("id") String id) {
        // The processor reads the resource back: a 404/410 retracts its facts, anything else is processed.
        return record("Observation", id, null, InboxChannel.FETCHED, null);
    }

    @PostMapping("/fhir-hook")
    ResponseEntity<String> notification(HttpServletRequest request) {
        String body;
        try {
            body = readBounded(request);
        } catch (BodyTooLarge e) {
            return refusal(HttpStatus.PAYLOAD_TOO_LARGE, "too-costly", e.getMessage());
        } catch (IOException e) {
            return refusal(HttpStatus.BAD_REQUEST, "structure", "The request body could not be read.");
        }
        if (body.isBlank()) {
            catchUp.requestSoon();
            return ResponseEntity.ok().build();
        }
        IBaseResource resource;
        try {
            resource = parser().parseResource(body);
        } catch (DataFormatException | ClassCastException e) {
            return quarantineAndRefuse(
                    null,
                    null,
                    null,
                    DataQualityReason.MALFORMED_RESOURCE,
                    "The notification body is not a parseable FHIR R4 JSON resource: " + firstLine(e.getMessage()),
                    body);
        }
        if (!(resource instanceof Bundle bundle)) {
            return quarantineAndRefuse(
                    resource.fhirType(),
                    resource.getIdElement().getIdPart(),
                    resource.getIdElement().getVersionIdPart(),
                    DataQualityReason.UNSUPPORTED_RESOURCE_TYPE,
                    "POST /fhir-hook takes an empty ping or a notification Bundle, not a " + resource.fhirType() + ".",
                    body);
        }
        return recordNotificationBundle(bundle);
    }

    /** An R4 backport notification Bundle: resources it carries are recorded; focus references are fetched. */
    private ResponseEntity<String> recordNotificationBundle(Bundle bundle) {
        int recorded = 0;
        try {
            for (Bundle.BundleEntryComponent entry : bundle.getEntry()) {
                if (entry.getResource() instanceof Observation obs) {
                    if (!ObservationMapper.isFhirId(obs.getIdElement().getIdPart())
                            || (obs.getMeta().hasVersionId()
                                    && !ObservationMapper.isFhirId(obs.getMeta().getVersionId()))) {
                        quarantine.add(new Refusal(
                                QuarantineStage.INTAKE,
                                "Observation",
                                null,
                                null,
                                null,
                                DataQualityReason.MALFORMED_RESOURCE,
                                "An Observation in the notification Bundle has no valid FHIR id or version id.",
                                null,
                                null,
                                null));
                        continue;
                    }
                    inbox.add(
                            "Observation",
                            obs.getIdElement().getIdPart(),
                            obs.getMeta().getVersionId(),
                            InboxChannel.REST_HOOK,
                            parser().encodeResourceToString(obs));
                    recorded++;
                } else if (entry.getResource() instanceof Parameters status) {
                    for (Parameters.ParametersParameterComponent event : status.getParameter()) {
                        if (!"notification-event".equals(event.getName())) {
                            continue;
                        }
                        for (Parameters.ParametersParameterComponent part : event.getPart()) {
                            if ("focus".equals(part.getName()) && part.getValue() instanceof Reference ref) {
                                var id = ref.getReferenceElement();
                                if ("Observation".equals(id.getResourceType())
                                        && ObservationMapper.isFhirId(id.getIdPart())) {
                                    inbox.add("Observation", id.getIdPart(), null, InboxChannel.FETCHED, null);
                                    recorded++;
                                }
                            }
                        }
                    }
                }
            }
        } catch (DataAccessException | TransactionException e) {
            return databaseUnavailable(e);
        }
        if (recorded == 0) {
            // a heartbeat or handshake: nothing to record, but a good moment to look for missed changes
            catchUp.requestSoon();
        }
        signal.recorded();
        return ResponseEntity.ok().build();
    }

    private ResponseEntity<String> record(String type, String id, String version, InboxChannel channel, String body) {
        try {
            groupWriter.add(inbox.row(type, id, version, channel, body));
        } catch (DataAccessException | TransactionException e) {
            return databaseUnavailable(e);
        }
        signal.recorded();
        return ResponseEntity.ok().build();
    }

    /**
     * The audit database could not record the notification (no connection could be had, or the commit failed): 503 so
     * the FHIR server retries; nothing was acknowledged. A connection that cannot be opened surfaces as a {@link
     * TransactionException} from the transaction manager, a failing statement as a {@link DataAccessException}.
     */
    private ResponseEntity<String> databaseUnavailable(RuntimeException e) {
        log.error(
                "could not record a rest-hook notification: the audit database is unavailable ({})",
                e.getClass().getSimpleName());
        return ResponseEntity.status(HttpStatus.SERVICE_UNAVAILABLE)
                .header("Retry-After", "5")
                .contentType(FHIR_JSON)
                .body(OperationOutcomes.json(
                        "error", "transient", "Lungflag could not record the notification; please retry."));
    }

    private ResponseEntity<String> quarantineAndRefuse(
            String type, String id, String version, DataQualityReason reason, String detail, String body) {
        return quarantineAndRefuse(HttpStatus.BAD_REQUEST, "invalid", type, id, version, reason, detail, body);
    }

    private ResponseEntity<String> quarantineAndRefuse(
            HttpStatus status,
            String issueCode,
            String type,
            String id,
            String version,
            DataQualityReason reason,
            String detail,
            String body) {
        try {
            quarantine.add(new Refusal(
                    QuarantineStage.INTAKE,
                    type != null && type.length() <= 64 ? type : null,
                    ObservationMapper.isFhirId(id) ? id : null,
                    ObservationMapper.isFhirId(version) ? version : null,
                    null,
                    reason,
                    detail,
                    null,
                    InboxRepository.sha256(body),
                    body));
        } catch (DataAccessException | TransactionException e) {
            return databaseUnavailable(e);
        }
        return refusal(status, issueCode, detail);
    }

    private static ResponseEntity<String> refusal(HttpStatus status, String code, String detail) {
        return ResponseEntity.status(status).contentType(FHIR_JSON).body(OperationOutcomes.json("error", code, detail));
    }

    private IParser parser() {
        return fhirContext.newJsonParser();
    }

    private String readBounded(HttpServletRequest request) throws IOException {
        long limit = properties.maxBodyBytes();
        long declared = request.getContentLengthLong();
        if (declared > limit) {
            throw new BodyTooLarge(declared, limit);
        }
        ByteArrayOutputStream out = new ByteArrayOutputStream((int) Math.max(0, Math.min(declared, 65536)));
        byte[] buffer = new byte[8192];
        long total = 0;
        try (InputStream in = request.getInputStream()) {
            int n;
            while ((n = in.read(buffer)) > 0) {
                total += n;
                if (total > limit) {
                    throw new BodyTooLarge(total, limit);
                }
                out.write(buffer, 0, n);
            }
        }
        return out.toString(StandardCharsets.UTF_8);
    }

    private static String firstLine(String message) {
        if (message == null) {
            return "no detail";
        }
        int nl = message.indexOf('\n');
        String line = nl < 0 ? message : message.substring(0, nl);
        return line.length() > 300 ? line.substring(0, 300) + "…" : line;
    }

    private static final class BodyTooLarge extends IOException {
        BodyTooLarge(long size, long limit) {
            super("The body (" + (size > limit ? "more than " + limit : size) + " bytes) exceeds the limit of " + limit
                    + " bytes (lungflag.intake.max-body-bytes).");
        }
    }
}
