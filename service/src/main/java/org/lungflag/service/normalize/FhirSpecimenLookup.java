package org.lungflag.service.normalize;

import ca.uhn.fhir.rest.client.api.IGenericClient;
import ca.uhn.fhir.rest.server.exceptions.ResourceGoneException;
import ca.uhn.fhir.rest.server.exceptions.ResourceNotFoundException;
import java.util.LinkedHashMap;
import java.util.Map;
import java.util.Optional;
import org.hl7.fhir.r4.model.IdType;
import org.hl7.fhir.r4.model.Specimen;

/** Reads referenced Specimens from the FHIR server, with a small cache (a blood gas panel shares one Specimen). */
public final class FhirSpecimenLookup implements SpecimenLookup {

    private static final int CAPACITY = 2000;

    private final IGenericClient client;
    private final Map<String, Optional<SpecimenFacts>> cache = new LinkedHashMap<>(256, 0.75f, true) {
        @Override
        protected boolean removeEldestEntry(Map.Entry<String, Optional<SpecimenFacts>> eldest) {
            return size() > CAPACITY;
        }
    };

    public FhirSpecimenLookup(IGenericClient client) {
        this.client = client;
    }

    @Override
    public synchronized Optional<SpecimenFacts> lookup(String reference) throws SpecimenUnavailable {
        Optional<SpecimenFacts> cached = cache.get(reference);
        if (cached != null) {
            return cached;
        }
        Optional<SpecimenFacts> facts;
        try {
            Specimen s = client.read()
                    .resource(Specimen.class)
                    .withId(new IdType(reference).getIdPart())
                    .execute();
            facts = Optional.of(ObservationMapper.facts(s));
        } catch (ResourceNotFoundException
                | ResourceGoneException
                | ca.uhn.fhir.rest.server.exceptions.InvalidRequestException e) {
            // gone, or a reference the server says is no valid id: it says nothing about the specimen, and retrying
            // would not change that
            facts = Optional.empty();
        } catch (RuntimeException e) {
            throw new SpecimenUnavailable(reference, e);
        }
        cache.put(reference, facts);
        return facts;
    }
}
