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
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Validates what Lungflag writes against its conformance package with HAPI's instance validator: one thread-safe
 * validator per application (fhir-notes.md: the first validation loads the core definitions, several seconds).
 * HAPI's validator module is replaced by {@link ReusingInstanceValidator}, which gives the same messages without
 * building the core validator anew for every resource, and HAPI's full set of core definitions by the subset
 * {@link OutgoingCoreDefinitions} keeps, which gives the same messages in less than half the heap. Unknown code
 * systems (LOINC, SNOMED CT, MDC without a terminology server) are warnings; a code outside an enumerated ValueSet
 * stays an error.
 */
public final class ConformanceValidator implements OutgoingValidator {

    private static final Logger log = LoggerFactory.getLogger(ConformanceValidator.class);

    /**
     * How many resources one core validator checks before it is replaced: enough that building it (~12 ms) is
     * small beside the validations, few enough that the lists it never clears stay small.
     */
    static final int VALIDATIONS_PER_INSTANCE = 64;

    private final FhirContext fhir;
    private volatile FhirValidator validator;

    public ConformanceValidator(FhirContext fhir) {
        this.fhir = fhir;
    }

    /** Built at the first validation, as HAPI loads its definitions then anyway (a few seconds, once). */
    private FhirValidator validator() {
        FhirValidator v = validator;
        if (v == null) {
            synchronized (this) {
                v = validator;
                if (v == null) {
                    validator = v = build();
                }
            }
        }
        return v;
    }

    private FhirValidator build() {
        long started = System.nanoTime();
        NpmPackageValidationSupport conformancePackage = conformancePackage(fhir);
        OutgoingCoreDefinitions.Subset core = OutgoingCoreDefinitions.build(fhir, conformancePackage);
        log.info(
                "outgoing check ready in {} ms: {} of {} core StructureDefinitions, {} ValueSets and {} CodeSystems"
                        + " kept",
                (System.nanoTime() - started) / 1_000_000,
                core.counts().structureDefinitions(),
                core.counts().coreStructureDefinitions(),
                core.counts().valueSets(),
                core.counts().codeSystems());
        return validator(
                fhir,
                conformancePackage,
                core.support(),
                chain -> new ReusingInstanceValidator(chain, VALIDATIONS_PER_INSTANCE));
    }

    /** The conformance package, as HAPI's validator reads it. */
    static NpmPackageValidationSupport conformancePackage(FhirContext fhir) {
        NpmPackageValidationSupport npm = new NpmPackageValidationSupport(fhir);
        try {
            npm.loadPackageFromClasspath(LungflagFhir.PACKAGE_CLASSPATH);
        } catch (IOException e) {
            throw new UncheckedIOException("cannot load the conformance package into the validator", e);
        }
        return npm;
    }

    /** A validator over the conformance package and all of HAPI's core definitions (the tests' reference). */
    static FhirValidator validatorWithAllCoreDefinitions(
            FhirContext fhir, Function<IValidationSupport, FhirInstanceValidator> module) {
        return validator(fhir, conformancePackage(fhir), new DefaultProfileValidationSupport(fhir), module);
    }

    /**
     * A HAPI validator over the conformance package, the core definitions {@code core} and the built-in terminology,
     * with the instance-validator module {@code module} makes from that support chain (here the reusing one; in its
     * test, HAPI's own as the reference).
     */
    static FhirValidator validator(
            FhirContext fhir,
            IValidationSupport conformancePackage,
            IValidationSupport core,
            Function<IValidationSupport, FhirInstanceValidator> module) {
        UnknownCodeSystemWarningValidationSupport unknown = new UnknownCodeSystemWarningValidationSupport(fhir);
        unknown.setNonExistentCodeSystemSeverity(IValidationSupport.IssueSeverity.WARNING);
        ValidationSupportChain chain = new ValidationSupportChain(
                conformancePackage,
                core,
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
        for (SingleValidationMessage m :
                validator().validateWithResult(resource).getMessages()) {
            if (m.getSeverity() == ResultSeverityEnum.ERROR || m.getSeverity() == ResultSeverityEnum.FATAL) {
                errors.add(m.getLocationString() + ": " + m.getMessage());
            }
        }
        return errors;
    }
}
