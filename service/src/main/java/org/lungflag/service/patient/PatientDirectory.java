package org.lungflag.service.patient;

import ca.uhn.fhir.rest.client.api.IGenericClient;
import ca.uhn.fhir.rest.server.exceptions.ResourceGoneException;
import ca.uhn.fhir.rest.server.exceptions.ResourceNotFoundException;
import java.sql.Date;
import java.sql.Timestamp;
import java.time.Clock;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Collection;
import java.util.HashMap;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import org.hl7.fhir.r4.model.Bundle;
import org.hl7.fhir.r4.model.Patient;
import org.lungflag.rules.patient.PatientFacts;
import org.lungflag.rules.patient.Sex;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;
import org.springframework.beans.factory.annotation.Value;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.stereotype.Component;

/**
 * Sex and birth date of the patients Lungflag sees, read from the FHIR server and cached in the audit store for
 * {@code lungflag.patient.refresh-after} (default 12 h), and kept in memory for the same time (the most recent
 * {@value #MEMORY_ENTRIES} patients) so a busy inbox does not read them back for every batch. If the server cannot be
 * reached, a cached value is used however old; with no cached value the caller retries later.
 */
@Component
public class PatientDirectory {

    private static final Logger log = LoggerFactory.getLogger(PatientDirectory.class);

    private final IGenericClient client;
    private final JdbcClient jdbc;
    private final Clock clock;
    private final Duration refreshAfter;

    static final int MEMORY_ENTRIES = 10_000;

    private final Map<String, Cached> memory = new LinkedHashMap<>(256, 0.75f, true) {
        @Override
        protected boolean removeEldestEntry(Map.Entry<String, Cached> eldest) {
            return size() > MEMORY_ENTRIES;
        }
    };

    PatientDirectory(
            IGenericClient client,
            JdbcClient jdbc,
            Clock clock,
            @Value("${lungflag.patient.refresh-after:12h}") Duration refreshAfter) {
        this.client = client;
        this.jdbc = jdbc;
        this.clock = clock;
        this.refreshAfter = refreshAfter;
    }

    /** Thrown when demographics are needed and neither the server nor the cache has them. */
    public static final class PatientUnavailable extends Exception {
        public PatientUnavailable(String patientId, Throwable cause) {
            super(
                    "Patient/" + patientId + " could not be read: "
                            + cause.getClass().getSimpleName(),
                    cause);
        }
    }

    private record Cached(PatientFacts facts, Instant at) {}

    public PatientFacts facts(String patientId) throws PatientUnavailable {
        Instant now = clock.instant();
        Cached remembered;
        synchronized (memory) {
            remembered = memory.get(patientId);
        }
        if (remembered != null && remembered.at().plus(refreshAfter).isAfter(now)) {
            return remembered.facts();
        }
        Optional<Cached> cached = cached(patientId);
        cached.ifPresent(c -> remember(patientId, c));
        if (cached.isPresent() && cached.get().at().plus(refreshAfter).isAfter(now)) {
            return cached.get().facts();
        }
        try {
            PatientFacts facts = PatientFactsMapper.from(
                    client.read().resource(Patient.class).withId(patientId).execute());
            store(facts, now);
            return facts;
        } catch (ResourceNotFoundException | ResourceGoneException e) {
            // A patient the server does not know: evaluate with unknown sex and age (rules say "not evaluable").
            PatientFacts unknown = new PatientFacts(patientId, Sex.UNKNOWN, null);
            store(unknown, now);
            return unknown;
        } catch (RuntimeException e) {
            if (cached.isPresent()) {
                return cached.get().facts();
            }
            throw new PatientUnavailable(patientId, e);
        }
    }

    /** Patients asked for at once by {@link #prefetch}: one search per this many (a server may cap its pages). */
    static final int SEARCH_CHUNK = 50;

    /**
     * Makes the demographics of several patients ready with few round trips, before {@link #facts} is asked for each
     * of them: one query of the audit store, then one FHIR search by {@code _id} per {@value #SEARCH_CHUNK} patients
     * whose cached value is missing or due for refresh. Only a shortcut: a patient the search did not return, or every
     * patient when the server cannot be reached, is left to {@link #facts}, which reads them one by one with its usual
     * fallbacks.
     */
    public void prefetch(Collection<String> patientIds) {
        Instant now = clock.instant();
        List<String> unknown = new ArrayList<>();
        synchronized (memory) {
            for (String id : patientIds) {
                Cached c = memory.get(id);
                if (c == null || !c.at().plus(refreshAfter).isAfter(now)) {
                    unknown.add(id);
                }
            }
        }
        if (unknown.isEmpty()) {
            return;
        }
        List<String> toRead = new ArrayList<>();
        Map<String, Cached> stored = new HashMap<>();
        for (int from = 0; from < unknown.size(); from += 500) {
            jdbc.sql(
                            "SELECT patient_id, sex, birth_date, demographics_at FROM patient_state WHERE patient_id IN (:ids)")
                    .param("ids", unknown.subList(from, Math.min(unknown.size(), from + 500)))
                    .query((rs, n) -> {
                        Cached c = row(rs.getString("patient_id"), rs);
                        return c == null ? null : stored.put(c.facts().patientId(), c);
                    })
                    .list();
        }
        for (String id : unknown) {
            Cached c = stored.get(id);
            if (c != null) {
                remember(id, c);
            }
            if (c == null || !c.at().plus(refreshAfter).isAfter(now)) {
                toRead.add(id);
            }
        }
        for (int from = 0; from < toRead.size(); from += SEARCH_CHUNK) {
            List<String> chunk = toRead.subList(from, Math.min(toRead.size(), from + SEARCH_CHUNK));
            try {
                Bundle found = client.search()
                        .forResource(Patient.class)
                        .where(Patient.RES_ID.exactly().codes(chunk))
                        .count(chunk.size())
                        .returnBundle(Bundle.class)
                        .execute();
                for (Bundle.BundleEntryComponent e : found.getEntry()) {
                    if (e.getResource() instanceof Patient patient
                            && chunk.contains(patient.getIdElement().getIdPart())) {
                        store(PatientFactsMapper.from(patient), now);
                    }
                }
            } catch (RuntimeException e) {
                // the one-by-one reads in facts() decide what to do without the server
                log.debug(
                        "prefetch of {} patients failed ({})",
                        chunk.size(),
                        e.getClass().getSimpleName());
            }
        }
    }

    private Optional<Cached> cached(String patientId) {
        return jdbc.sql("SELECT sex, birth_date, demographics_at FROM patient_state WHERE patient_id = :id")
                .param("id", patientId)
                .query((rs, n) -> row(patientId, rs))
                .optional();
    }

    private static Cached row(String patientId, java.sql.ResultSet rs) throws java.sql.SQLException {
        Timestamp at = rs.getTimestamp("demographics_at");
        if (at == null) {
            return null;
        }
        Date birth = rs.getDate("birth_date");
        String sex = rs.getString("sex");
        return new Cached(
                new PatientFacts(
                        patientId,
                        sex == null ? Sex.UNKNOWN : Sex.valueOf(sex),
                        birth == null ? null : birth.toLocalDate()),
                at.toInstant());
    }

    private void remember(String patientId, Cached cached) {
        synchronized (memory) {
            memory.put(patientId, cached);
        }
    }

    private void store(PatientFacts facts, Instant now) {
        remember(facts.patientId(), new Cached(facts, now));
        Timestamp ts = Timestamp.from(now);
        int updated = jdbc.sql(
                        "UPDATE patient_state SET sex = :sex, birth_date = :birth, demographics_at = :now, updated_at = :now"
                                + " WHERE patient_id = :id")
                .param("sex", facts.sex().name())
                .param("birth", facts.birthDate() == null ? null : Date.valueOf(facts.birthDate()))
                .param("now", ts)
                .param("id", facts.patientId())
                .update();
        if (updated == 0) {
            try {
                insert(facts, ts);
            } catch (org.springframework.dao.DuplicateKeyException raced) {
                store(facts, now); // created meanwhile by the evaluation of this patient: update it instead
            }
        }
    }

    private void insert(PatientFacts facts, Timestamp ts) {
        jdbc.sql("""
                            INSERT INTO patient_state (patient_id, sex, birth_date, demographics_at, state_seq, updated_at)
                            VALUES (:id, :sex, :birth, :now, 0, :now)
                            """)
                .param("id", facts.patientId())
                .param("sex", facts.sex().name())
                .param("birth", facts.birthDate() == null ? null : Date.valueOf(facts.birthDate()))
                .param("now", ts)
                .update();
    }
}
