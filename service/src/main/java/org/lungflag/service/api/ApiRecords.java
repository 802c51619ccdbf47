package org.lungflag.service.api;

import com.fasterxml.jackson.databind.JsonNode;
import java.time.Instant;
import java.time.LocalDate;
import java.util.List;

/** The records the audit API returns (and the console renders). Resource ids only, never names or identifiers. */
public final class ApiRecords {

    private ApiRecords() {}

    /** One advisory episode. {@code status}: ACTIVE, RESOLVED, EXPIRED or ENTERED_IN_ERROR; {@code mode}: the mode it ran in. */
    public record AdvisoryRow(
            String key,
            String patient,
            String ruleId,
            String ruleVersion,
            String code,
            String status,
            Instant startedAt,
            Instant endedAt,
            String endReason,
            String mode,
            String flagId,
            Instant updatedAt) {}

    /** Filters of the advisory list; every one optional. {@code from}/{@code to} bound the episode's start. */
    public record AdvisoryFilter(
            String rule, String code, String status, Instant from, Instant to, String patient, int limit, int offset) {}

    /** One evaluation row (the explanation is in {@link EvaluationDetail}). */
    public record EvaluationRow(
            long id,
            String patient,
            String ruleId,
            String ruleVersion,
            String ruleDigest,
            Instant anchorTime,
            Instant evaluatedAt,
            String outcome,
            String tierCode,
            String reasonCode,
            String detail,
            String episodeKey,
            String mode,
            boolean superseded) {}

    /** Filters of the evaluation list. */
    public record EvaluationFilter(
            String patient,
            String rule,
            String outcome,
            Instant from,
            Instant to,
            boolean includeSuperseded,
            int limit,
            int offset) {}

    /**
     * One evaluation with its explanation as stored: {@code measurements} (kind, converted value and canonical unit,
     * time, role, source resource type/id/version, the original value and unit, unit repairs), {@code indices}
     * (code, value, unit, formula id + version, inputs, notes), {@code parameters} in effect, and the advisory,
     * basis and caution texts.
     */
    public record EvaluationDetail(EvaluationRow evaluation, JsonNode explanation) {}

    /** What was queued for the FHIR server for an episode, and what became of it. */
    public record WriteRow(
            long id, String kind, String status, int attempts, Instant createdAt, Instant deliveredAt, String result) {}

    /**
     * An episode explained from the audit alone (design invariant 5): the episode, the rule as it is now (id,
     * version, digest, sources), every evaluation that belongs to it with its explanation, and the Flag writes.
     */
    public record EpisodeExplanation(
            AdvisoryRow episode,
            String title,
            String advisoryText,
            String basisText,
            String cautionText,
            String ruleDigestNow,
            List<SourceView> sources,
            List<EvaluationDetail> evaluations,
            List<WriteRow> writes) {}

    /** A quarantine entry without any body excerpt (that may carry record content; see the stored hash instead). */
    public record QuarantineRow(
            long id,
            String stage,
            String reference,
            String patient,
            String reasonCode,
            String detail,
            String bodySha256,
            boolean serverOutcome,
            Instant createdAt) {}

    /** Filters of the quarantine list. */
    public record QuarantineFilter(String reason, String stage, Instant from, Instant to, int limit, int offset) {}

    /** A rule of the catalog as it runs here. */
    public record RuleView(
            String id,
            String version,
            String digest,
            String title,
            String population,
            List<String> support,
            List<String> triggers,
            List<SourceView> sources,
            List<ParameterView> parameters,
            List<TierView> tiers,
            TemporalView temporal,
            String caution,
            String mode,
            String modeOrigin) {}

    /** A rule's published (or rule-of-thumb) source. */
    public record SourceView(String id, String citation, String supports, String tag) {}

    /** A parameter: its default, the value in effect here (after site overrides) and its source. */
    public record ParameterView(
            String name,
            String type,
            String unit,
            String defaultValue,
            String effectiveValue,
            boolean overridden,
            String source,
            String sourceCitation,
            String description) {}

    /** A tier: advisory code, display, Flag priority and its CEL condition as written. */
    public record TierView(String code, String display, String priority, String condition) {}

    /** The temporal parameters by name (values are in {@link ParameterView}). */
    public record TemporalView(
            String sustained,
            String consecutiveCount,
            String consecutiveSpacing,
            String resolveAfter,
            String expireAfter) {}

    /** One switch of a rule's mode. */
    public record ModeChange(
            long id,
            String ruleId,
            String previousMode,
            String newMode,
            String changedBy,
            String reason,
            Instant changedAt) {}

    /** The body of {@code PUT /api/v1/rules/{id}/mode}. */
    public record ModeRequest(String mode, String reason) {}

    /** An index formula of the catalog. */
    public record IndexView(
            String code,
            String display,
            String formulaId,
            String formulaVersion,
            String formula,
            String unit,
            String loinc,
            List<IndexInputView> inputs,
            String validity,
            String source) {}

    /** One input of an index formula. */
    public record IndexInputView(String symbol, String kind, String unit, String requirement) {}

    /** Advisory onsets of one rule on one UTC day. */
    public record FiringsPerDay(LocalDate day, String ruleId, long onsets) {}

    /**
     * One rule's figures over the period: onsets, onsets per 100 ventilated patient-days, and the median time from
     * onset to resolution of the episodes that resolved.
     */
    public record RuleStatistics(
            String ruleId,
            long onsets,
            Double perHundredVentilatedPatientDays,
            long resolved,
            Double medianHoursOnsetToResolution) {}

    /** The statistics of a period, with how they were counted. */
    public record Statistics(
            Instant from,
            Instant to,
            long ventilatedPatientDays,
            String howCounted,
            List<RuleStatistics> rules,
            List<FiringsPerDay> firingsPerDay) {}

    /** Intake health for the overview. */
    public record Overview(
            Instant lastNotificationAt,
            Instant catchUpWatermark,
            Long catchUpLagSeconds,
            Instant catchUpLastSuccessAt,
            String catchUpLastError,
            long inboxBacklog,
            long outboxBacklog,
            Instant outboxOldestAt,
            Long outboxOldestAgeSeconds,
            long quarantineCount,
            long activeAdvisories,
            String fhirServerStatus,
            String databaseStatus,
            String writeBackStatus,
            Instant at) {}

    /** One value of a patient's timeline. */
    public record TimelinePoint(Instant time, double value, String source) {}

    /** One series: {@code key} is a quantity kind or an index code. */
    public record TimelineSeries(String key, String label, String unit, List<TimelinePoint> points) {}

    /** An evaluation on the timeline, linked to its inputs. */
    public record TimelineEvaluation(long id, Instant time, String ruleId, String outcome, String tierCode) {}

    /** A patient's timeline: series, episodes to shade, evaluations to click. */
    public record PatientTimeline(
            String patient,
            List<TimelineSeries> series,
            List<AdvisoryRow> episodes,
            List<TimelineEvaluation> evaluations) {}
}
