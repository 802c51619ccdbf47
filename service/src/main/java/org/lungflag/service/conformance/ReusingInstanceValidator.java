package org.lungflag.service.conformance;

import ca.uhn.fhir.context.support.IValidationSupport;
import ca.uhn.fhir.rest.api.EncodingEnum;
import ca.uhn.fhir.validation.IValidationContext;
import com.google.gson.JsonArray;
import com.google.gson.JsonElement;
import com.google.gson.JsonObject;
import com.google.gson.JsonParser;
import java.io.ByteArrayInputStream;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;
import java.util.Objects;
import java.util.concurrent.ConcurrentLinkedDeque;
import org.hl7.fhir.common.hapi.validation.validator.FhirInstanceValidator;
import org.hl7.fhir.common.hapi.validation.validator.WorkerContextValidationSupportAdapter;
import org.hl7.fhir.exceptions.FHIRException;
import org.hl7.fhir.r5.elementmodel.Manager;
import org.hl7.fhir.r5.model.StructureDefinition;
import org.hl7.fhir.r5.utils.validation.ValidatorSession;
import org.hl7.fhir.r5.utils.validation.constants.IdStatus;
import org.hl7.fhir.r5.utils.xver.XVerExtensionManagerOld;
import org.hl7.fhir.utilities.i18n.I18nConstants;
import org.hl7.fhir.utilities.validation.ValidationMessage;
import org.hl7.fhir.validation.ValidatorSettings;
import org.hl7.fhir.validation.instance.InstanceValidator;

/**
 * HAPI's {@link FhirInstanceValidator}, except that the core {@link InstanceValidator} behind it is built once and
 * used for a bounded number of validations instead of once per validation.
 *
 * <p>Why: HAPI 8.8 builds a new {@code InstanceValidator} for every resource, and that construction (an OID table
 * read from CSV, a FHIRPath engine, profile utilities over every StructureDefinition) was about two thirds of the
 * ~17 ms each outgoing resource took to validate (JFR, 300 derived-index Observations). The outbox validates every
 * Flag, Provenance and derived-index Observation it writes, so this cost sat on the same two processors as intake.
 *
 * <p>Why reuse is sound: the core validator's main entry point ({@code InstanceValidator.validate(Object, List,
 * String, Element, List)}, org.hl7.fhir.validation 6.7.9) starts by clearing its per-validation state (fetch cache,
 * resource trackers, tracked messages, execution id). Two lists it never clears (the codings it has seen, kept for an
 * IPS check that is off here, and texts kept for an AI check that is off here) grow with each validation, so an
 * instance is retired after {@code usesPerInstance} validations and after any exception. The settings are applied
 * once, when an instance is built, with the same values HAPI's per-call wrapper sets. {@code
 * ReusingInstanceValidatorTest} checks, on valid and broken Flags, Provenances and Observations in shuffled order,
 * that every message (severity, location, text) equals what the unmodified HAPI validator reports.
 *
 * <p>Thread-safe: each validating thread takes an idle instance from a pool (or builds one) and returns it after.
 * Inputs in XML go to HAPI's own path unchanged; the outbox validates resources, which HAPI hands over as JSON.
 */
final class ReusingInstanceValidator extends FhirInstanceValidator {

    private final int usesPerInstance;

    private final ConcurrentLinkedDeque<Pooled> idle = new ConcurrentLinkedDeque<>();

    ReusingInstanceValidator(IValidationSupport validationSupport, int usesPerInstance) {
        super(validationSupport);
        if (usesPerInstance < 1) {
            throw new IllegalArgumentException("usesPerInstance must be at least 1, was " + usesPerInstance);
        }
        this.usesPerInstance = usesPerInstance;
    }

    private static final class Pooled {
        final InstanceValidator validator;
        int uses;

        Pooled(InstanceValidator validator) {
            this.validator = validator;
        }
    }

    @Override
    protected List<ValidationMessage> validate(IValidationContext<?> context) {
        if (context.getResourceAsStringEncoding() != EncodingEnum.JSON) {
            return super.validate(context);
        }
        WorkerContextValidationSupportAdapter worker = provideWorkerContext();
        Pooled pooled = idle.pollFirst();
        if (pooled == null) {
            pooled = new Pooled(build(worker));
        }
        List<ValidationMessage> messages = validateJson(pooled.validator, worker, context);
        // only an instance that finished normally goes back; one that threw is dropped with whatever state it holds
        if (++pooled.uses < usesPerInstance) {
            idle.offerFirst(pooled);
        }
        return messages;
    }

    /** How many instances are idle in the pool (for the test). */
    int idleInstances() {
        return idle.size();
    }

    /** A core validator with the settings HAPI's wrapper applies before each validation, applied once. */
    private InstanceValidator build(WorkerContextValidationSupportAdapter worker) {
        InstanceValidator v = new InstanceValidator(
                worker,
                Objects.requireNonNullElseGet(getHostApplicationServices(), NullEvaluationContext::new),
                new XVerExtensionManagerOld(worker),
                new ValidatorSession(),
                new ValidatorSettings());
        v.setAssumeValidRestReferences(isAssumeValidRestReferences());
        v.setBestPracticeWarningLevel(getBestPracticeWarningLevel());
        v.setAnyExtensionsAllowed(isAnyExtensionsAllowed());
        v.setResourceIdRule(IdStatus.OPTIONAL);
        v.setNoTerminologyChecks(isNoTerminologyChecks());
        v.setErrorForUnknownProfiles(isErrorForUnknownProfiles());
        // HAPI fixes this one, as it interacts with UnknownCodeSystemWarningValidationSupport
        v.setUnknownCodeSystemsCauseErrors(true);
        v.getExtensionDomains().addAll(getExtensionDomains());
        v.setFetcher(getValidatorResourceFetcher());
        v.setPolicyAdvisor(getValidatorPolicyAdvisor());
        v.setNoExtensibleWarnings(isNoExtensibleWarnings());
        v.setNoBindingMsgSuppressed(isNoBindingMsgSuppressed());
        v.setAllowExamples(isAllowExamples());
        v.setAllowXsiLocation(true);
        return v;
    }

    /** What HAPI's wrapper does for a JSON input, on the given core validator. */
    private List<ValidationMessage> validateJson(
            InstanceValidator v, WorkerContextValidationSupportAdapter worker, IValidationContext<?> context) {
        List<StructureDefinition> profiles = new ArrayList<>();
        List<ValidationMessage> unknownProfiles = new ArrayList<>();
        for (String url : context.getOptions().getProfiles()) {
            addProfile(worker, profiles, url, unknownProfiles);
        }
        String input = context.getResourceAsString();
        JsonObject json = JsonParser.parseString(input).getAsJsonObject();
        JsonObject meta = json.getAsJsonObject("meta");
        if (meta != null && meta.get("profile") instanceof JsonArray declared) {
            for (JsonElement url : declared) {
                addProfile(worker, profiles, url.getAsString(), unknownProfiles);
            }
        }
        List<ValidationMessage> messages = new ArrayList<>();
        v.validate(
                context.getOptions().getAppContext(),
                messages,
                new ByteArrayInputStream(input.getBytes(StandardCharsets.UTF_8)),
                Manager.FhirFormat.JSON,
                profiles);
        if (profiles.isEmpty()) {
            messages.addAll(unknownProfiles);
        }
        List<ValidationMessage> kept = new ArrayList<>(messages.size());
        for (ValidationMessage m : messages) {
            String id = m.getMessageId();
            // the two messages HAPI's wrapper filters out
            boolean dropped = id != null
                    && (id.equals(I18nConstants.TERMINOLOGY_TX_BINDING_NOSOURCE)
                            || (id.equals(I18nConstants.TERMINOLOGY_TX_VALUESET_NOTFOUND)
                                    && m.getMessage().contains("http://hl7.org/fhir/ValueSet/mimetypes")));
            if (dropped) {
                continue;
            }
            if (I18nConstants.VALIDATION_VAL_PROFILE_UNKNOWN.equals(id)
                    || I18nConstants.VALIDATION_VAL_PROFILE_UNKNOWN_NOT_POLICY.equals(id)) {
                m.setLevel(
                        isErrorForUnknownProfiles()
                                ? ValidationMessage.IssueSeverity.ERROR
                                : ValidationMessage.IssueSeverity.WARNING);
            }
            kept.add(m);
        }
        return kept;
    }

    private static void addProfile(
            WorkerContextValidationSupportAdapter worker,
            List<StructureDefinition> profiles,
            String url,
            List<ValidationMessage> unknownProfiles) {
        StructureDefinition sd;
        try {
            sd = worker.fetchResource(StructureDefinition.class, url);
        } catch (FHIRException e) {
            return; // as HAPI's wrapper: a profile that fails to load is skipped (the validator then reports it)
        }
        if (sd != null) {
            profiles.add(sd);
        } else {
            ValidationMessage m = new ValidationMessage();
            m.setMessageId(I18nConstants.VALIDATION_VAL_PROFILE_UNKNOWN);
            m.setLevel(ValidationMessage.IssueSeverity.ERROR);
            m.setMessage("Invalid profile. Failed to retrieve profile with url=" + url);
            unknownProfiles.add(m);
        }
    }
}
