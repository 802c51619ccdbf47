package org.lungflag.service.offline;

import java.util.List;
import org.lungflag.rules.engine.Episode;
import org.lungflag.rules.engine.RuleEvaluation;
import org.lungflag.service.normalize.NormalizedResource;

/**
 * One patient evaluated offline: every evaluation in clinical order (superseded ones already replaced), each
 * episode in its final state, and the resources that were refused or partly refused.
 */
public record PatientRun(
        String patientId, List<RuleEvaluation> evaluations, List<Episode> episodes, List<NormalizedResource> refused) {

    public PatientRun {
        evaluations = List.copyOf(evaluations);
        episodes = List.copyOf(episodes);
        refused = List.copyOf(refused);
    }
}
