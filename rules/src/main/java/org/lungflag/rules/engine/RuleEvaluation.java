package org.lungflag.rules.engine;

import java.time.Instant;
import org.lungflag.rules.quality.DataQualityReason;

/**
 * One rule evaluated for one patient at one clinical time (an evaluation point, or the time an episode resolved or
 * expired). Carries the rule's id, version and digest, and its explanation.
 *
 * @param tier the advisory code of the tier met (for active outcomes) or of the episode that ended, else {@code
 *     null}
 * @param reason for {@link Outcome#NOT_EVALUABLE}, why; else {@code null}
 * @param detail a plain sentence: why not evaluable, or what an onset still waits for, or empty
 * @param episode the episode after this evaluation (active, or just ended), or {@code null} when there is none
 */
public record RuleEvaluation(
        String patientId,
        String ruleId,
        String ruleVersion,
        String ruleDigest,
        Instant at,
        Outcome outcome,
        String tier,
        DataQualityReason reason,
        String detail,
        Episode episode,
        Explanation explanation) {}
