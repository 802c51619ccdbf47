package org.lungflag.fhir.profiles;

import ca.uhn.fhir.context.support.DefaultProfileValidationSupport;
import ca.uhn.fhir.context.support.IValidationSupport;
import ca.uhn.fhir.validation.FhirValidator;
import ca.uhn.fhir.validation.ResultSeverityEnum;
import ca.uhn.fhir.validation.SingleValidationMessage;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.util.List;
import org.hl7.fhir.common.hapi.validation.support.CommonCodeSystemsTerminologyService;
import org.hl7.fhir.common.hapi.validation.support.InMemoryTerminologyServerValidationSupport;
import org.hl7.fhir.common.hapi.validation.support.NpmPackageValidationSupport;
import org.hl7.fhir.common.hapi.validation.support.SnapshotGeneratingValidationSupport;
import org.hl7.fhir.common.hapi.validation.support.UnknownCodeSystemWarningValidationSupport;
import org.hl7.fhir.common.hapi.validation.support.ValidationSupportChain;
import org.hl7.fhir.common.hapi.validation.validator.FhirInstanceValidator;

/**
 * One validator for the whole test run, built the way the service builds it (fhir-notes.md, "Validation"): the
 * package loaded from the classpath by HAPI's {@link NpmPackageValidationSupport}, the core definitions, the
 * common and in-memory terminology services, snapshot generation for our differential-only profiles, and unknown
 * code systems reported as warnings.
 */
final class PackageValidator {

    private static FhirValidator validator;
    private static ValidationSupportChain chain;

    private PackageValidator() {}

    static synchronized FhirValidator get() {
        if (validator == null) {
            var ctx = ConformancePackage.FHIR;
            var npm = new NpmPackageValidationSupport(ctx);
            try {
                npm.loadPackageFromClasspath(LungflagFhir.PACKAGE_CLASSPATH);
            } catch (IOException e) {
                throw new UncheckedIOException(e);
            }
            chain = new ValidationSupportChain(
                    npm,
                    new DefaultProfileValidationSupport(ctx),
                    new CommonCodeSystemsTerminologyService(ctx),
                    new InMemoryTerminologyServerValidationSupport(ctx),
                    new SnapshotGeneratingValidationSupport(ctx),
                    unknownCodeSystemsAreWarnings());
            validator = ctx.newValidator();
            var instanceValidator = new FhirInstanceValidator(chain);
            // Check a literal reference's type (Flag.author is Device/..., not Practitioner/...) without fetching it.
            instanceValidator.setAssumeValidRestReferences(true);
            validator.registerValidatorModule(instanceValidator);
        }
        return validator;
    }

    /**
     * Without a terminology server, LOINC, SNOMED CT and MDC are unknown. HAPI reports an unknown code system as
     * an error where a required binding applies (our input profiles bind Observation.code to ValueSets of LOINC
     * and MDC codes); this support turns that into a warning. Membership in the enumerated ValueSet is still
     * checked: a code outside it stays an error.
     */
    private static UnknownCodeSystemWarningValidationSupport unknownCodeSystemsAreWarnings() {
        var support = new UnknownCodeSystemWarningValidationSupport(ConformancePackage.FHIR);
        support.setNonExistentCodeSystemSeverity(IValidationSupport.IssueSeverity.WARNING);
        return support;
    }

    static synchronized ValidationSupportChain chain() {
        get();
        return chain;
    }

    static List<SingleValidationMessage> validate(String json) {
        return get().validateWithResult(json).getMessages();
    }

    static boolean isError(SingleValidationMessage m) {
        return m.getSeverity() == ResultSeverityEnum.ERROR || m.getSeverity() == ResultSeverityEnum.FATAL;
    }

    static String describe(SingleValidationMessage m) {
        return m.getSeverity() + " " + m.getLocationString() + ": " + m.getMessage();
    }
}
