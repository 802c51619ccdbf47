package org.lungflag.service.normalize;

import java.time.Instant;
import java.util.List;
import org.lungflag.rules.measure.ClinicalFact;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.quality.DataQualityReason;

/**
 * One resource version after normalization: the facts to offer to the patient's timeline (values in canonical
 * units), what was refused (whole resource or parts), or a retraction.
 *
 * @param source the resource version, or {@code null} when it had no id
 * @param patientId the subject, or {@code null} when there is none (then {@code facts} is empty)
 * @param retracted the resource was marked entered-in-error: withdraw what it contributed
 */
public record NormalizedResource(
        SourceRef source, String patientId, List<ClinicalFact> facts, List<Refusal> refusals, boolean retracted) {

    public NormalizedResource {
        facts = List.copyOf(facts);
        refusals = List.copyOf(refusals);
    }

    /**
     * A refused resource or part.
     *
     * @param part {@code null} for the whole resource, else e.g. {@code component[1]}
     */
    public record Refusal(String part, DataQualityReason reason, String detail) {}

    /** The earliest clinical time among the facts, or {@code null}. */
    public Instant clinicalTime() {
        Instant t = null;
        for (ClinicalFact f : facts) {
            if (t == null || f.time().isBefore(t)) {
                t = f.time();
            }
        }
        return t;
    }

    public boolean wholeResourceRefused() {
        return facts.isEmpty() && !retracted;
    }
}
