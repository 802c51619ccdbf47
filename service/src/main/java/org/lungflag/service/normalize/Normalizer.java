package org.lungflag.service.normalize;

import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import org.hl7.fhir.r4.model.Observation;
import org.lungflag.rules.measure.ClinicalFact;
import org.lungflag.rules.units.MeasurementNormalizer;
import org.lungflag.rules.units.NormalizationResult;
import org.lungflag.rules.units.RawMeasurement;
import org.lungflag.service.normalize.MappingOutcome.PartRefusal;
import org.lungflag.service.normalize.MappingOutcome.Refused;
import org.lungflag.service.normalize.MappingOutcome.Retracted;
import org.lungflag.service.normalize.MappingOutcome.Usable;
import org.lungflag.service.normalize.NormalizedResource.Refusal;
import org.lungflag.service.normalize.SpecimenLookup.SpecimenUnavailable;

/**
 * The one normalization path (design invariant 2): the FHIR mapping, then unit conversion, FiO2 repair and
 * plausibility with the rules core's {@link MeasurementNormalizer}. The live service and replay both call this.
 */
public final class Normalizer {

    private final ObservationMapper mapper;
    private final MeasurementNormalizer measurements;

    public Normalizer(ObservationMapper mapper, MeasurementNormalizer measurements) {
        this.mapper = mapper;
        this.measurements = measurements;
    }

    public ObservationMapper mapper() {
        return mapper;
    }

    public NormalizedResource normalize(Observation obs, Instant now, SpecimenLookup specimens)
            throws SpecimenUnavailable {
        MappingOutcome outcome = mapper.map(obs, now, specimens);
        if (outcome instanceof Retracted r) {
            return new NormalizedResource(r.source(), r.patientId(), List.of(), List.of(), true);
        }
        if (outcome instanceof Refused r) {
            return new NormalizedResource(
                    r.source(), r.patientId(), List.of(), List.of(new Refusal(null, r.reason(), r.detail())), false);
        }
        Usable u = (Usable) outcome;
        List<ClinicalFact> facts = new ArrayList<>(u.states());
        List<Refusal> refusals = new ArrayList<>();
        for (PartRefusal p : u.refusedParts()) {
            refusals.add(new Refusal(p.part(), p.reason(), p.detail()));
        }
        for (RawReading r : u.readings()) {
            NormalizationResult result = measurements.normalize(
                    new RawMeasurement(r.kind(), r.value(), r.unit(), r.time(), r.role(), r.specimen(), r.source()));
            if (result instanceof NormalizationResult.Accepted a) {
                facts.add(a.measurement());
            } else {
                NormalizationResult.Refused refused = (NormalizationResult.Refused) result;
                refusals.add(new Refusal(
                        r.part(),
                        refused.reason(),
                        r.source().unversioned() + " " + r.part() + ": " + refused.detail()));
            }
        }
        return new NormalizedResource(u.source(), u.patientId(), facts, refusals, false);
    }
}
