package org.lungflag.service.normalize;

import java.util.List;
import org.lungflag.rules.measure.ClinicalFact;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.quality.DataQualityReason;

/** What an Observation version yields for Lungflag, before unit conversion. */
public sealed interface MappingOutcome {

    /** The resource the outcome is about, or {@code null} when it had no id. */
    SourceRef source();

    /** The subject Patient's resource id, or {@code null} when there is none. */
    String patientId();

    /**
     * Usable content: numeric readings (to be converted to canonical units), categorical states, and any parts
     * that were refused (e.g. one component of a panel with an unknown unit).
     */
    record Usable(
            SourceRef source,
            String patientId,
            List<RawReading> readings,
            List<ClinicalFact> states,
            List<PartRefusal> refusedParts)
            implements MappingOutcome {
        public Usable {
            readings = List.copyOf(readings);
            states = List.copyOf(states);
            refusedParts = List.copyOf(refusedParts);
        }
    }

    /** The whole resource is refused, with a reason from the data-quality CodeSystem. */
    record Refused(SourceRef source, String patientId, DataQualityReason reason, String detail)
            implements MappingOutcome {}

    /** The resource was marked entered-in-error: whatever it contributed must be withdrawn. */
    record Retracted(SourceRef source, String patientId) implements MappingOutcome {}

    /** A refused part of an otherwise usable resource. */
    record PartRefusal(String part, DataQualityReason reason, String detail) {}
}
