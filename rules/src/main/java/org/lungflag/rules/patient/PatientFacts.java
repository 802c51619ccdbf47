package org.lungflag.rules.patient;

import java.time.Instant;
import java.time.LocalDate;
import java.time.Period;
import java.time.ZoneOffset;
import java.util.Objects;
import java.util.Optional;

/**
 * The few demographic facts the rules need. No name, no identifier: {@code patientId} is the FHIR resource id.
 *
 * @param birthDate may be {@code null} when unknown
 */
public record PatientFacts(String patientId, Sex sex, LocalDate birthDate) {

    public PatientFacts {
        Objects.requireNonNull(patientId, "patientId");
        sex = sex == null ? Sex.UNKNOWN : sex;
    }

    /** Age in completed years at a clinical time (UTC date), or empty when the birth date is unknown. */
    public Optional<Integer> ageInYearsAt(Instant at) {
        if (birthDate == null) {
            return Optional.empty();
        }
        LocalDate day = at.atZone(ZoneOffset.UTC).toLocalDate();
        return Optional.of(Period.between(birthDate, day).getYears());
    }
}
