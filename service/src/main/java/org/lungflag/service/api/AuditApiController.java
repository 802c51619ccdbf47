package org.lungflag.service.api;

import java.time.Duration;
import java.time.Instant;
import java.time.temporal.ChronoUnit;
import java.util.List;
import java.util.Locale;
import org.lungflag.service.api.ApiRecords.AdvisoryFilter;
import org.lungflag.service.api.ApiRecords.AdvisoryRow;
import org.lungflag.service.api.ApiRecords.EpisodeExplanation;
import org.lungflag.service.api.ApiRecords.EvaluationDetail;
import org.lungflag.service.api.ApiRecords.EvaluationFilter;
import org.lungflag.service.api.ApiRecords.EvaluationRow;
import org.lungflag.service.api.ApiRecords.FiringsPerDay;
import org.lungflag.service.api.ApiRecords.IndexView;
import org.lungflag.service.api.ApiRecords.ModeChange;
import org.lungflag.service.api.ApiRecords.ModeRequest;
import org.lungflag.service.api.ApiRecords.Overview;
import org.lungflag.service.api.ApiRecords.PatientTimeline;
import org.lungflag.service.api.ApiRecords.QuarantineFilter;
import org.lungflag.service.api.ApiRecords.QuarantineRow;
import org.lungflag.service.api.ApiRecords.RuleStatistics;
import org.lungflag.service.api.ApiRecords.RuleView;
import org.lungflag.service.api.ApiRecords.Statistics;
import org.lungflag.service.evaluation.EvaluationMode;
import org.springframework.format.annotation.DateTimeFormat;
import org.springframework.http.HttpStatus;
import org.springframework.security.core.Authentication;
import org.springframework.web.bind.annotation.GetMapping;
import org.springframework.web.bind.annotation.PathVariable;
import org.springframework.web.bind.annotation.PutMapping;
import org.springframework.web.bind.annotation.RequestBody;
import org.springframework.web.bind.annotation.RequestMapping;
import org.springframework.web.bind.annotation.RequestParam;
import org.springframework.web.bind.annotation.RestController;
import org.springframework.web.server.ResponseStatusException;

/**
 * The audit API. Every list answers JSON, or CSV with {@code ?format=csv} (or {@code Accept: text/csv}). Reading needs
 * the auditor role; {@code PUT /rules/{id}/mode} needs admin (SecurityConfiguration).
 */
@RestController
@RequestMapping(
        path = "/api/v1",
        produces = {"application/json", "text/csv"})
class AuditApiController {

    private final AuditQueries queries;
    private final RuleCatalogView catalog;
    private final StatisticsService statistics;
    private final OverviewService overview;
    private final TimelineService timelines;
    private final ExplanationService explanations;

    AuditApiController(
            AuditQueries queries,
            RuleCatalogView catalog,
            StatisticsService statistics,
            OverviewService overview,
            TimelineService timelines,
            ExplanationService explanations) {
        this.queries = queries;
        this.catalog = catalog;
        this.statistics = statistics;
        this.overview = overview;
        this.timelines = timelines;
        this.explanations = explanations;
    }

    @GetMapping("/advisories")
    List<AdvisoryRow> advisories(
            @RequestParam(required = false) String rule,
            @RequestParam(required = false) String code,
            @RequestParam(required = false) String status,
            @RequestParam(required = false) @DateTimeFormat(iso = DateTimeFormat.ISO.DATE_TIME) Instant from,
            @RequestParam(required = false) @DateTimeFormat(iso = DateTimeFormat.ISO.DATE_TIME) Instant to,
            @RequestParam(required = false) String patient,
            @RequestParam(defaultValue = "200") int limit,
            @RequestParam(defaultValue = "0") int offset) {
        return queries.advisories(new AdvisoryFilter(rule, code, status, from, to, patient, limit, offset));
    }

    @GetMapping(path = "/advisories/{key}", produces = "application/json")
    EpisodeExplanation advisory(@PathVariable String key) {
        return explanations.explain(key).orElseThrow(() -> notFound("no advisory episode " + key));
    }

    @GetMapping("/evaluations")
    List<EvaluationRow> evaluations(
            @RequestParam(required = false) String patient,
            @RequestParam(required = false) String rule,
            @RequestParam(required = false) String outcome,
            @RequestParam(required = false) @DateTimeFormat(iso = DateTimeFormat.ISO.DATE_TIME) Instant from,
            @RequestParam(required = false) @DateTimeFormat(iso = DateTimeFormat.ISO.DATE_TIME) Instant to,
            @RequestParam(defaultValue = "false") boolean includeSuperseded,
            @RequestParam(defaultValue = "200") int limit,
            @RequestParam(defaultValue = "0") int offset) {
        return queries.evaluations(
                new EvaluationFilter(patient, rule, outcome, from, to, includeSuperseded, limit, offset));
    }

    @GetMapping(path = "/evaluations/{id}", produces = "application/json")
    EvaluationDetail evaluation(@PathVariable long id) {
        return queries.evaluation(id).orElseThrow(() -> notFound("no evaluation " + id));
    }

    @GetMapping("/quarantine")
    List<QuarantineRow> quarantine(
            @RequestParam(required = false) String reason,
            @RequestParam(required = false) String stage,
            @RequestParam(required = false) @DateTimeFormat(iso = DateTimeFormat.ISO.DATE_TIME) Instant from,
            @RequestParam(required = false) @DateTimeFormat(iso = DateTimeFormat.ISO.DATE_TIME) Instant to,
            @RequestParam(defaultValue = "200") int limit,
            @RequestParam(defaultValue = "0") int offset) {
        return queries.quarantine(new QuarantineFilter(reason, stage, from, to, limit, offset));
    }

    @GetMapping("/rules")
    List<RuleView> rules() {
        return catalog.rules();
    }

    @GetMapping(path = "/rules/{id}", produces = "application/json")
    RuleView rule(@PathVariable String id) {
        return catalog.rule(id).orElseThrow(() -> notFound("no rule " + id + " in the catalog"));
    }

    @GetMapping("/rules/{id}/mode-changes")
    List<ModeChange> modeChanges(@PathVariable String id) {
        rule(id);
        return queries.modeChanges(id);
    }

    @PutMapping(path = "/rules/{id}/mode", consumes = "application/json", produces = "application/json")
    RuleView switchMode(@PathVariable String id, @RequestBody ModeRequest request, Authentication who) {
        rule(id);
        EvaluationMode mode = parseMode(request == null ? null : request.mode());
        try {
            return catalog.switchMode(id, mode, who.getName(), request.reason());
        } catch (RuleCatalogView.SwitchRefused e) {
            throw new ResponseStatusException(HttpStatus.CONFLICT, e.getMessage());
        }
    }

    static EvaluationMode parseMode(String text) {
        if (text != null) {
            switch (text.trim().toLowerCase(Locale.ROOT)) {
                case "silent":
                    return EvaluationMode.SILENT;
                case "active":
                    return EvaluationMode.ACTIVE;
                default:
            }
        }
        throw new ResponseStatusException(
                HttpStatus.BAD_REQUEST, "mode must be \"silent\" or \"active\" (got " + text + ")");
    }

    @GetMapping("/indices")
    List<IndexView> indices() {
        return catalog.indices();
    }

    @GetMapping(path = "/statistics", produces = "application/json")
    Statistics statistics(
            @RequestParam(required = false) @DateTimeFormat(iso = DateTimeFormat.ISO.DATE_TIME) Instant from,
            @RequestParam(required = false) @DateTimeFormat(iso = DateTimeFormat.ISO.DATE_TIME) Instant to) {
        Instant end = to == null ? Instant.now().truncatedTo(ChronoUnit.SECONDS) : to;
        Instant start = from == null ? end.minus(30, ChronoUnit.DAYS) : from;
        if (!start.isBefore(end)) {
            throw new ResponseStatusException(HttpStatus.BAD_REQUEST, "from must be before to");
        }
        return statistics.statistics(start, end);
    }

    @GetMapping("/statistics/firings")
    List<FiringsPerDay> firings(
            @RequestParam(required = false) @DateTimeFormat(iso = DateTimeFormat.ISO.DATE_TIME) Instant from,
            @RequestParam(required = false) @DateTimeFormat(iso = DateTimeFormat.ISO.DATE_TIME) Instant to) {
        return statistics(from, to).firingsPerDay();
    }

    @GetMapping("/statistics/rules")
    List<RuleStatistics> ruleStatistics(
            @RequestParam(required = false) @DateTimeFormat(iso = DateTimeFormat.ISO.DATE_TIME) Instant from,
            @RequestParam(required = false) @DateTimeFormat(iso = DateTimeFormat.ISO.DATE_TIME) Instant to) {
        return statistics(from, to).rules();
    }

    @GetMapping(path = "/overview", produces = "application/json")
    Overview overview() {
        return overview.overview();
    }

    @GetMapping(path = "/patients/{id}/timeline", produces = "application/json")
    PatientTimeline timeline(@PathVariable String id, @RequestParam(defaultValue = "48") int hours) {
        if (hours < 1 || hours > 24 * 30) {
            throw new ResponseStatusException(HttpStatus.BAD_REQUEST, "hours must be between 1 and 720");
        }
        return timelines.timeline(id, Duration.ofHours(hours));
    }

    private static ResponseStatusException notFound(String message) {
        return new ResponseStatusException(HttpStatus.NOT_FOUND, message);
    }
}
