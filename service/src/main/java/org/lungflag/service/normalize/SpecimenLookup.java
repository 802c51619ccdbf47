package org.lungflag.service.normalize;

import java.time.Instant;
import java.util.Optional;
import org.lungflag.rules.measure.SpecimenKind;

/**
 * Resolves {@code Observation.specimen} to the specimen kind and collection time. The live service reads the
 * Specimen from the FHIR server (cached); replay looks it up among the exported Specimens.
 */
public interface SpecimenLookup {

    /** What a Specimen says. {@code collectedAt} may be {@code null}. */
    record SpecimenFacts(SpecimenKind kind, Instant collectedAt) {}

    /**
     * @param reference e.g. {@code Specimen/abg-1}
     * @return the facts, or empty when the Specimen does not exist or says nothing usable
     * @throws SpecimenUnavailable when it cannot be read right now (the caller retries later)
     */
    Optional<SpecimenFacts> lookup(String reference) throws SpecimenUnavailable;

    /** The Specimen could not be read right now (e.g. the FHIR server is down). */
    final class SpecimenUnavailable extends Exception {
        public SpecimenUnavailable(String reference, Throwable cause) {
            super(
                    "Specimen " + reference + " could not be read: "
                            + cause.getClass().getSimpleName(),
                    cause);
        }
    }

    /** For inputs that never reference Specimens. */
    SpecimenLookup NONE = reference -> Optional.empty();
}
