package org.lungflag.service.conformance;

import ca.uhn.fhir.context.FhirContext;
import ca.uhn.fhir.context.support.DefaultProfileValidationSupport;
import ca.uhn.fhir.context.support.IValidationSupport;
import ca.uhn.fhir.validation.FhirValidator;
import ca.uhn.fhir.validation.ResultSeverityEnum;
import ca.uhn.fhir.validation.SingleValidationMessage;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.util.ArrayList;
import java.util.List;
import java.util.function.Function;
import org.hl7.fhir.common.hapi.validation.support.CommonCodeSystemsTerminologyService;
import org.hl7.fhir.common.hapi.validation.support.InMemoryTerminologyServerValidationSupport;
import org.hl7.fhir.common.hapi.validation.support.NpmPackageValidationSupport;
import org.hl7.fhir.common.hapi.validation.support.SnapshotGeneratingValidationSupport;
import org.hl7.fhir.common.hapi.validation.support.UnknownCodeSystemWarningValidationSupport;
import org.hl7.fhir.common.hapi.validation.support.ValidationSupportChain;
import org.hl7.fhir.common.hapi.validation.validator.FhirInstanceValidator;
import org.hl7.fhir.instance.model.api.IBaseResource;
import org.lungflag.fhir.profiles.LungflagFhir;
import org.lungflag.service.writeback.OutgoingValidator;

/**
 * Validates what Lungflag writes against its conformance package with HAPI's instance validator: one thread-safe
 * validator per application (fhir-notes.md: the first validation loads the core definitions, several seconds).
 * HAPI's validator module is replaced by {@link ReusingInstanceValidator}, which gives the same messages without
 * building the core validator anew for every resource. Unknown code systems (LOINC, SNOMED CT, MDC without a
 * terminology server) are warnings; a code outside an enumerated ValueSet stays an error.
 */
public final class ConformanceValidator implements OutgoingValidator {

    /**
     * How many resources one core validator checks before it is replaced: enough that building it (~12 ms) is
     * small beside the validations, few enough that the lists it never clears stay small.
     */
    static final int VALIDATIONS_PER_INSTANCE = 64;

    private final FhirValidator validator;

    public ConformanceValidator(FhirContext fhir) {
        this.validator = validator(fhir, chain -> new ReusingInstanceValidator(chain, VALIDATIONS_PER_INSTANCE));
    }

    /**
     * A HAPI validator over the conformance package, the core definitions and the built-in terminology, with the
     * instance-validator module {@code module} makes from that support chain (here the reusing one; in its test,
     * HAPI's own as the reference).
     */
    static FhirValidator validator(FhirContext fhir, Function<IValidationSupport, FhirInstanceValidator> module) {
        NpmPackageValidationSupport npm = new NpmPackageValidationSupport(fhir);
        try {
            npm.loadPackageFromClasspath(LungflagFhir.PACKAGE_CLASSPATH);
        } catch (IOException e) {
            throw new UncheckedIOException("cannot load the conformance package into the validator", e);
        }
        UnknownCodeSystemWarningValidationSupport unknown = new UnknownCodeSystemWarningValidationSupport(fhir);
        unknown.setNonExistentCodeSystemSeverity(IValidationSupport.IssueSeverity.WARNING);
        ValidationSupportChain chain = new ValidationSupportChain(
                npm,
                new DefaultProfileValidationSupport(fhir),
                new CommonCodeSystemsTerminologyService(fhir),
                new InMemoryTerminologyServerValidationSupport(fhir),
                new SnapshotGeneratingValidationSupport(fhir),
                unknown);
        FhirInstanceValidator instance = module.apply(chain);
        instance.setAssumeValidRestReferences(true);
        FhirValidator validator = fhir.newValidator();
        validator.registerValidatorModule(instance);
        return validator;
    }

    @Override
    public List<String> errors(IBaseResource resource) {
        List<String> errors = new ArrayList<>();
        for (SingleValidationMessage m : validator.validateWithResult(resource).getMessages()) {
            if (m.getSeverity() == ResultSeverityEnum.ERROR || m.getSeverity() == ResultSeverityEnum.FATAL) {
                errors.add(m.getLocationString() + ": " + m.getMessage());
            }
        }
        return errors;
    }
}
