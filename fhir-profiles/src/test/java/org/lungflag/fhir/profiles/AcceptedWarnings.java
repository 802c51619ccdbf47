package org.lungflag.fhir.profiles;

import ca.uhn.fhir.validation.ResultSeverityEnum;
import ca.uhn.fhir.validation.SingleValidationMessage;
import java.util.List;

/**
 * The validator warnings we accept, each with the reason (also listed in REVIEW.md). Any other warning fails the
 * tests, so a new kind of warning is looked at rather than silently tolerated.
 */
final class AcceptedWarnings {

    record Accepted(String messageContains, String onlyFor, String reason) {}

    static final List<Accepted> ALL = List.of(
            new Accepted(
                    "CodeSystem is unknown and can't be validated: http://loinc.org",
                    null,
                    "LOINC is not loaded (no terminology server in the build); codes are checked against our enumerated"
                            + " ValueSets instead"),
            new Accepted(
                    "CodeSystem is unknown and can't be validated: urn:iso:std:iso:11073:10101",
                    null,
                    "IEEE 11073 MDC is not loaded (no terminology server)"),
            new Accepted(
                    "CodeSystem is unknown and can't be validated: http://snomed.info/sct",
                    null,
                    "SNOMED CT is not loaded (no terminology server)"),
            new Accepted(
                    "references CodeSystem 'http://snomed.info/sct' which has status 'not-present'",
                    "ValueSet",
                    "SNOMED CT is known to HAPI only as a stub without content"),
            new Accepted(
                    "None of the codings provided are in the value set 'DataAbsentReason'",
                    "Observation",
                    "a not-evaluable derived index carries our data-quality reason beside the core data-absent-reason"
                            + " code; the core binding is extensible and the validator reports the extra coding"),
            new Accepted(
                    "all observations should have a performer",
                    "Observation",
                    "derived indices are made by software: R4 Observation.performer cannot reference a Device, so"
                            + " the Lungflag Device is in Observation.device"),
            new Accepted(
                    "dom-6: 'A resource should have narrative",
                    "package",
                    "conformance resources and templates carry no narrative; CONFORMANCE.md is their human-readable"
                            + " form (every example has narrative)"));

    private AcceptedWarnings() {}

    /**
     * True when the message is an error or a warning not on the list. {@code where} is the resource type, or
     * "package" for resources of the package itself (as opposed to examples).
     */
    static boolean isUnexpected(SingleValidationMessage m, String resourceType, boolean packageResource) {
        if (PackageValidator.isError(m)) {
            return true;
        }
        if (m.getSeverity() != ResultSeverityEnum.WARNING) {
            return false;
        }
        return ALL.stream()
                .noneMatch(a -> m.getMessage().contains(a.messageContains())
                        && (a.onlyFor() == null
                                || a.onlyFor().equals(resourceType)
                                || (packageResource && a.onlyFor().equals("package"))));
    }
}
