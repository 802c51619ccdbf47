package org.lungflag.service.api;

import java.util.List;
import java.util.Optional;
import org.lungflag.rules.catalog.Cautions;
import org.lungflag.rules.catalog.RuleDefinition;
import org.lungflag.service.api.ApiRecords.AdvisoryRow;
import org.lungflag.service.api.ApiRecords.EpisodeExplanation;
import org.lungflag.service.api.ApiRecords.EvaluationDetail;
import org.springframework.stereotype.Component;

/**
 * An advisory episode explained from the audit store alone: every evaluation of it with inputs (resource id +
 * version), converted values, index formulas (id + version), rule version + digest and parameters, and the texts
 * of the latest evaluation that carried an advisory (advisory, basis, caution).
 */
@Component
public class ExplanationService {

    private final AuditQueries queries;
    private final RuleCatalogView catalog;

    ExplanationService(AuditQueries queries, RuleCatalogView catalog) {
        this.queries = queries;
        this.catalog = catalog;
    }

    public Optional<EpisodeExplanation> explain(String key) {
        return queries.advisory(key).map(this::explain);
    }

    private EpisodeExplanation explain(AdvisoryRow episode) {
        List<EvaluationDetail> evaluations = queries.evaluationsOfEpisode(episode.key());
        EvaluationDetail last = evaluations.stream()
                .filter(e -> !e.evaluation().superseded())
                .filter(e -> e.explanation() != null
                        && !e.explanation().path("advisoryText").asText().isBlank())
                .reduce((a, b) -> b)
                .orElse(null);
        Optional<RuleDefinition> rule = catalog.definition(episode.ruleId());
        String caution = last == null
                ? Cautions.GENERAL
                : last.explanation().path("cautionText").asText(Cautions.GENERAL);
        return new EpisodeExplanation(
                episode,
                rule.map(RuleDefinition::title).orElse(episode.ruleId()),
                last == null ? null : last.explanation().path("advisoryText").asText(null),
                last == null ? null : last.explanation().path("basisText").asText(null),
                caution.isBlank() ? Cautions.GENERAL : caution,
                rule.map(RuleDefinition::digest).orElse(null),
                rule.map(r -> r.sources().stream().map(RuleCatalogView::source).toList())
                        .orElse(List.of()),
                evaluations,
                queries.writesOfEpisode(episode.key()));
    }
}
