package org.lungflag.service.evaluation;

import java.time.Clock;
import java.time.Instant;
import org.lungflag.service.patient.PatientDirectory;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;
import org.springframework.scheduling.annotation.Scheduled;
import org.springframework.stereotype.Component;

/**
 * Moves the clinical clock on for patients with active advisories, so an advisory resolves or expires when its
 * deadline passes even if no new data arrives. The clock runs {@code lungflag.evaluation.clock-grace} behind the
 * wall clock so a result charted a little late seldom reopens an advisory just closed.
 */
@Component
class ClockAdvancer {

    private static final Logger log = LoggerFactory.getLogger(ClockAdvancer.class);

    private final EpisodeRepository episodes;
    private final PatientDirectory patients;
    private final PatientProcessor processor;
    private final EvaluationProperties properties;
    private final Clock clock;

    ClockAdvancer(
            EpisodeRepository episodes,
            PatientDirectory patients,
            PatientProcessor processor,
            EvaluationProperties properties,
            Clock clock) {
        this.episodes = episodes;
        this.patients = patients;
        this.processor = processor;
        this.properties = properties;
        this.clock = clock;
    }

    @Scheduled(
            initialDelayString = "${lungflag.evaluation.advance-interval:1m}",
            fixedDelayString = "${lungflag.evaluation.advance-interval:1m}")
    void advanceAll() {
        Instant clinicalNow = clock.instant().minus(properties.clockGrace());
        for (String patientId : episodes.patientsWithActiveEpisodes()) {
            try {
                processor.advance(patientId, patients.facts(patientId), clinicalNow);
            } catch (Exception e) {
                log.warn(
                        "Patient/{}: clinical clock not advanced this round ({})",
                        patientId,
                        e.getClass().getSimpleName());
            }
        }
    }
}
