package org.lungflag.service.replay;

import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.TreeMap;
import org.lungflag.rules.engine.Episode;
import org.lungflag.rules.engine.EpisodeStatus;
import org.lungflag.rules.engine.RuleEvaluation;
import org.lungflag.rules.engine.TierChange;

/**
 * What one rule did over the whole replay (or over one sweep value): advisories raised (episode onsets), patients
 * with at least one, evaluations that met a tier, outcomes, not-evaluable reasons, time spent in each tier, and how
 * long episodes lasted from onset to resolution.
 */
final class RuleTally {

    final String ruleId;
    long evaluations;
    /** Evaluations whose outcome met a tier (onset, ongoing, escalated, de-escalated). */
    long tierMet;

    long onsets;
    long patients;
    long resolved;
    long expired;
    long stillActive;
    final Map<String, Long> outcomes = new TreeMap<>();
    final Map<String, Long> notEvaluable = new TreeMap<>();
    final Map<String, Long> secondsInTier = new TreeMap<>();
    final List<Long> onsetToResolutionSeconds = new ArrayList<>();

    RuleTally(String ruleId) {
        this.ruleId = ruleId;
    }

    /**
     * Adds one patient's evaluations and episodes for this rule.
     *
     * @param end the replay's clinical end: an episode still active is counted in its tier up to here
     */
    void add(List<RuleEvaluation> evals, List<Episode> episodes, Instant end) {
        boolean any = false;
        for (RuleEvaluation e : evals) {
            if (!e.ruleId().equals(ruleId)) {
                continue;
            }
            evaluations++;
            outcomes.merge(e.outcome().name(), 1L, Long::sum);
            if (e.outcome().isActiveTier()) {
                tierMet++;
            }
            if (e.reason() != null) {
                notEvaluable.merge(e.reason().code(), 1L, Long::sum);
            }
        }
        for (Episode ep : episodes) {
            if (!ep.ruleId().equals(ruleId)) {
                continue;
            }
            any = true;
            onsets++;
            Instant stop = ep.end() != null ? ep.end() : end;
            List<TierChange> history = ep.tierHistory();
            for (int i = 0; i < history.size(); i++) {
                Instant from = history.get(i).at();
                Instant to = i + 1 < history.size() ? history.get(i + 1).at() : stop;
                if (to.isAfter(from)) {
                    secondsInTier.merge(
                            history.get(i).tier(), Duration.between(from, to).toSeconds(), Long::sum);
                }
            }
            if (ep.status() == EpisodeStatus.RESOLVED) {
                resolved++;
                onsetToResolutionSeconds.add(
                        Duration.between(ep.start(), ep.end()).toSeconds());
            } else if (ep.status() == EpisodeStatus.EXPIRED) {
                expired++;
            } else {
                stillActive++;
            }
        }
        if (any) {
            patients++;
        }
    }

    /** Median onset-to-resolution in seconds over resolved episodes, or {@code null} when none resolved. */
    Long medianOnsetToResolutionSeconds() {
        if (onsetToResolutionSeconds.isEmpty()) {
            return null;
        }
        List<Long> sorted = new ArrayList<>(onsetToResolutionSeconds);
        sorted.sort(null);
        int n = sorted.size();
        return n % 2 == 1 ? sorted.get(n / 2) : (sorted.get(n / 2 - 1) + sorted.get(n / 2)) / 2;
    }

    /** Onsets per 100 patient-days, or {@code null} when there is no observed time. */
    static Double per100PatientDays(long count, double patientDays) {
        return patientDays > 0 ? count * 100.0 / patientDays : null;
    }
}
