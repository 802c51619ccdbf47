package org.lungflag.service.intake;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.parser.DataFormatException;
import ca.uhn.fhir.parser.IParser;
import jakarta.servlet.http.HttpServlet;
import jakarta.servlet.http.HttpServletRequest;
import jakarta.servlet.http.HttpServletResponse;
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
import org.springframework.transaction.TransactionException;

/**
 * The rest-hook receiver (design.md): {@code PUT /fhir-hook/Observation/{id}} with the resource as payload, {@code
 * POST /fhir-hook} as an empty ping or an R4 backport notification Bundle, and {@code DELETE
 * /fhir-hook/Observation/{id}}. It acknowledges only after the notification is durably recorded in the inbox and
 * never evaluates on the caller's thread.
 *
 * <p>A plain servlet of its own, not a Spring MVC controller, because it takes every notification: the load benchmark
 * found the dispatcher, its handler lookup and Spring Security's per-request handler introspection to be more than
 * half of the hook's CPU time. Its only caller is the FHIR server, authenticated by {@link HookAuthenticationFilter}
 * (mapped to this servlet) before anything is read; Spring Security's chain guards every other servlet
 * ({@code security.SecurityConfiguration}). So this servlet refuses, by itself, anything it does not serve.
 */
public final class HookServlet extends HttpServlet {

    /** The servlet's name in the container; the security chain's filter leaves out exactly this servlet. */
    public static final String SERVLET_NAME = "lungflagRestHook";

    /** Where it is mapped; {@link HttpServletRequest#getPathInfo()} is then the rest after {@code /fhir-hook}. */
    static final String URL_MAPPING = "/fhir-hook/*";

    private static final long serialVersionUID = 1L;
    private static final Logger log = LoggerFactory.getLogger(HookServlet.class);
    private static final String OBSERVATION_PATH = "/Observation/";
    private static final String PATH_ID_NOT_A_FHIR_ID =
            "The rest-hook path's Observation id is not a valid FHIR id (1 to 64 of A-Z, a-z, 0-9, '-' and '.').";
    private static final String SERVES =
            "The rest-hook takes PUT and DELETE /fhir-hook/Observation/{id} and POST /fhir-hook.";

    private final FhirContext fhirContext;
    private final InboxRepository inbox;
    private final InboxSignal signal;
    private final QuarantineRepository quarantine;
    private final IntakeProperties properties;
    private final CatchUpSearch catchUp;
    private final InboxGroupWriter groupWriter;

    HookServlet(
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

    @Override
    protected void service(HttpServletRequest request, HttpServletResponse response) throws IOException {
        Reply reply;
        try {
            reply = route(request);
        } catch (RuntimeException e) {
            // the class and the place only: a message could quote the body
            StackTraceElement[] at = e.getStackTrace();
            log.error(
                    "the rest-hook failed on a {} request ({} at {})",
                    request.getMethod(),
                    e.getClass().getName(),
                    at.length > 0 ? at[0] : "an unknown place");
            reply = refusal(
                    HttpStatus.INTERNAL_SERVER_ERROR,
                    "exception",
                    "Lungflag failed while handling the notification; please retry (a repeated notification is"
                            + " recorded once).");
        }
        write(reply, response);
    }

    /**
     * Dispatches on the method and the path after {@code /fhir-hook}, which the container has decoded and normalized
     * ({@code ..} resolved, path parameters removed). Path parameters are refused outright, as Spring Security's
     * firewall refuses them on every other path.
     */
    private Reply route(HttpServletRequest request) {
        if (request.getRequestURI().indexOf(';') >= 0) {
            return refusal(HttpStatus.BAD_REQUEST, "structure", "The rest-hook path must not carry ';' parameters.");
        }
        String path = request.getPathInfo();
        String method = request.getMethod();
        if (path == null || path.equals("/")) {
            return method.equals("POST") ? notification(request) : notAllowed("POST");
        }
        if (path.startsWith(OBSERVATION_PATH) && path.indexOf('/', OBSERVATION_PATH.length()) < 0) {
            String id = path.substring(OBSERVATION_PATH.length());
            return switch (method) {
                case "PUT" -> observation(id, request);
                case "DELETE" -> deleted(id);
                default -> notAllowed("PUT, DELETE");
            };
        }
        return refusal(HttpStatus.NOT_FOUND, "not-found", SERVES);
    }

    private static Reply notAllowed(String allow) {
        return new Reply(
                HttpServletResponse.SC_METHOD_NOT_ALLOWED,
                null,
                allow,
                OperationOutcomes.json("error", "not-supported", SERVES));
    }

    private static void write(Reply reply, HttpServletResponse response) throws IOException {
        response.setStatus(reply.status());
        response.setHeader("Cache-Control", "no-store");
        response.setHeader("X-Content-Type-Options", "nosniff");
        if (reply.retryAfterSeconds() != null) {
            response.setHeader("Retry-After", reply.retryAfterSeconds());
        }
        if (reply.allow() != null) {
            response.setHeader("Allow", reply.allow());
        }
        if (reply.body() == null) {
            response.setContentLength(0);
            return;
        }
        byte[] body = reply.body().getBytes(StandardCharsets.UTF_8);
        response.setContentType("application/fhir+json;charset=UTF-8");
        response.setContentLength(body.length);
        response.getOutputStream().write(body);
    }

    /** What the hook answers: a status, the optional Retry-After and Allow headers, and an OperationOutcome. */
    private record Reply(int status, String retryAfterSeconds, String allow, String body) {
        static final Reply OK = new Reply(HttpServletResponse.SC_OK, null, null, null);
    }

    private Reply observation(String pathId, HttpServletRequest request) {
        if (!ObservationMapper.isFhirId(pathId)) {
            // not stored as an id (it may be anything); the entry keeps an excerpt of the body instead
            String body;
            try {
                body = readBounded(request);
            } catch (IOException e) {
                body = null;
            }
            return quarantineAndRefuse(
                    "Observation", null, null, DataQualityReason.MALFORMED_RESOURCE, PATH_ID_NOT_A_FHIR_ID, body);
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

    private Reply deleted(String id) {
        if (!ObservationMapper.isFhirId(id)) {
            return quarantineAndRefuse(
                    "Observation", null, null, DataQualityReason.MALFORMED_RESOURCE, PATH_ID_NOT_A_FHIR_ID, null);
        }
        // The processor reads the resource back: a 404/410 retracts its facts, anything else is processed.
        return record("Observation", id, null, InboxChannel.FETCHED, null);
    }

    private Reply notification(HttpServletRequest request) {
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
            return Reply.OK;
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
    private Reply recordNotificationBundle(Bundle bundle) {
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
        return Reply.OK;
    }

    private Reply record(String type, String id, String version, InboxChannel channel, String body) {
        try {
            groupWriter.add(inbox.row(type, id, version, channel, body));
        } catch (DataAccessException | TransactionException e) {
            return databaseUnavailable(e);
        }
        signal.recorded();
        return Reply.OK;
    }

    /**
     * The audit database could not record the notification (no connection could be had, or the commit failed): 503 so
     * the FHIR server retries; nothing was acknowledged. A connection that cannot be opened surfaces as a {@link
     * TransactionException} from the transaction manager, a failing statement as a {@link DataAccessException}.
     */
    private Reply databaseUnavailable(RuntimeException e) {
        log.error(
                "could not record a rest-hook notification: the audit database is unavailable ({})",
                e.getClass().getSimpleName());
        return new Reply(
                HttpServletResponse.SC_SERVICE_UNAVAILABLE,
                "5",
                null,
                OperationOutcomes.json(
                        "error", "transient", "Lungflag could not record the notification; please retry."));
    }

    private Reply quarantineAndRefuse(
            String type, String id, String version, DataQualityReason reason, String detail, String body) {
        return quarantineAndRefuse(HttpStatus.BAD_REQUEST, "invalid", type, id, version, reason, detail, body);
    }

    private Reply quarantineAndRefuse(
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

    private static Reply refusal(HttpStatus status, String code, String detail) {
        return new Reply(status.value(), null, null, OperationOutcomes.json("error", code, detail));
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
