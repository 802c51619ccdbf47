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
 * validator per application (fhir-notes.md: the first validation loads the core definitions, several seconds,
 * then about 20 ms each). Unknown code systems (LOINC, SNOMED CT, MDC without a terminology server) are
 * warnings; a code outside an enumerated ValueSet stays an error.
 */
public final class ConformanceValidator implements OutgoingValidator {

    private final FhirValidator validator;

    public ConformanceValidator(FhirContext fhir) {
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
        FhirInstanceValidator instance = new FhirInstanceValidator(chain);
        instance.setAssumeValidRestReferences(true);
        this.validator = fhir.newValidator();
        this.validator.registerValidatorModule(instance);
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
