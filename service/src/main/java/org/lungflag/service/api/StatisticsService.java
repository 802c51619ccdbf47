package org.lungflag.service.api;

import java.time.Duration;
import java.time.Instant;
import java.time.LocalDate;
import java.time.ZoneOffset;
import java.util.ArrayList;
import java.util.HashSet;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.TreeMap;
import org.lungflag.rules.catalog.RuleCatalog;
import org.lungflag.rules.catalog.RuleDefinition;
import org.lungflag.service.api.ApiRecords.FiringsPerDay;
import org.lungflag.service.api.ApiRecords.RuleStatistics;
import org.lungflag.service.api.ApiRecords.Statistics;
import org.lungflag.service.api.AuditQueries.EpisodeSpan;
import org.springframework.stereotype.Component;

/**
 * Firing statistics. How they are counted (also returned with every answer):
 *
 * <ul>
 *   <li>a <b>firing</b> is an advisory episode's onset (silent-mode episodes included; episodes withdrawn as entered
 *       in error left out), bucketed by the UTC calendar day of its start;
 *   <li>a <b>ventilated patient-day</b> is a pair (patient, UTC calendar day) with at least one charted respiratory
 *       support record of invasive ventilation that day (a simplification of daily device-day counting: common
 *       practice, no source);
 *   <li><b>per 100 ventilated patient-days</b> = firings × 100 / ventilated patient-days of the same period;
 *   <li><b>median onset to resolution</b>: over the episodes that started in the period and resolved (not expired).
 * </ul>
 */
@Component
public class StatisticsService {

    static final String HOW_COUNTED = "firings = advisory episode onsets (silent mode included, withdrawn episodes"
            + " excluded) by UTC day of onset; ventilated patient-days = distinct (patient, UTC day) pairs with at least"
            + " one charted invasive-ventilation support record that day (common practice, no source); per 100"
            + " ventilated patient-days = firings x 100 / ventilated patient-days; median onset-to-resolution over"
            + " episodes of the period that resolved (expired ones excluded)";

    private final AuditQueries queries;
    private final RuleCatalog catalog;

    StatisticsService(AuditQueries queries, RuleCatalog catalog) {
        this.queries = queries;
        this.catalog = catalog;
    }

    public Statistics statistics(Instant from, Instant to) {
        List<EpisodeSpan> spans = queries.episodeSpans(from, to);
        Set<String> patientDays = new HashSet<>();
        for (AuditQueries.VentilatedAt v : queries.invasiveVentilationRecords(from, to)) {
            patientDays.add(v.patientId() + "|" + day(v.time()));
        }
        long vpd = patientDays.size();
        Map<String, Map<LocalDate, Long>> perRuleDay = new TreeMap<>();
        Map<String, List<Double>> resolutionHours = new TreeMap<>();
        for (EpisodeSpan s : spans) {
            perRuleDay.computeIfAbsent(s.ruleId(), k -> new TreeMap<>()).merge(day(s.start()), 1L, Long::sum);
            if ("RESOLVED".equals(s.status()) && s.end() != null) {
                resolutionHours
                        .computeIfAbsent(s.ruleId(), k -> new ArrayList<>())
                        .add(Duration.between(s.start(), s.end()).toSeconds() / 3600.0);
            }
        }
        List<FiringsPerDay> firings = new ArrayList<>();
        perRuleDay.forEach((rule, days) -> days.forEach((d, n) -> firings.add(new FiringsPerDay(d, rule, n))));
        firings.sort((a, b) -> a.day().equals(b.day())
                ? a.ruleId().compareTo(b.ruleId())
                : a.day().compareTo(b.day()));
        List<RuleStatistics> rules = new ArrayList<>();
        Set<String> ruleIds = new java.util.TreeSet<>(perRuleDay.keySet());
        catalog.rules().stream().map(RuleDefinition::id).forEach(ruleIds::add);
        for (String rule : ruleIds) {
            long onsets = perRuleDay.getOrDefault(rule, Map.of()).values().stream()
                    .mapToLong(Long::longValue)
                    .sum();
            List<Double> hours = resolutionHours.getOrDefault(rule, List.of());
            rules.add(new RuleStatistics(
                    rule, onsets, vpd == 0 ? null : onsets * 100.0 / vpd, hours.size(), median(hours)));
        }
        return new Statistics(from, to, vpd, HOW_COUNTED, rules, firings);
    }

    static LocalDate day(Instant t) {
        return t.atZone(ZoneOffset.UTC).toLocalDate();
    }

    static Double median(List<Double> values) {
        if (values.isEmpty()) {
            return null;
        }
        List<Double> sorted = new ArrayList<>(values);
        sorted.sort(Double::compare);
        int n = sorted.size();
        return n % 2 == 1 ? sorted.get(n / 2) : (sorted.get(n / 2 - 1) + sorted.get(n / 2)) / 2.0;
    }
}
