package org.lungflag.service.writeback;

import java.util.List;
import org.hl7.fhir.instance.model.api.IBaseResource;

/** Checks a resource Lungflag is about to write against its own conformance package. */
public interface OutgoingValidator {

    /** Error messages (location: message); empty when the resource is valid. Warnings are not returned. */
    List<String> errors(IBaseResource resource);
}
