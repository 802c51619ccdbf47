package org.lungflag.service.console;

import java.time.Duration;
import java.time.Instant;
import java.time.LocalDate;
import java.time.ZoneOffset;
import java.time.format.DateTimeParseException;
import java.time.temporal.ChronoUnit;
import java.util.List;
import java.util.Map;
import java.util.function.Function;
import java.util.stream.Collectors;
import org.lungflag.rules.catalog.Cautions;
import org.lungflag.service.api.ApiRecords.AdvisoryFilter;
import org.lungflag.service.api.ApiRecords.QuarantineFilter;
import org.lungflag.service.api.ApiRecords.RuleStatistics;
import org.lungflag.service.api.AuditQueries;
import org.lungflag.service.api.ExplanationService;
import org.lungflag.service.api.OverviewService;
import org.lungflag.service.api.RuleCatalogView;
import org.lungflag.service.api.StatisticsService;
import org.lungflag.service.evaluation.EvaluationMode;
import org.lungflag.service.security.SecurityProperties;
import org.springframework.http.HttpStatus;
import org.springframework.security.core.Authentication;
import org.springframework.stereotype.Controller;
import org.springframework.ui.Model;
import org.springframework.web.bind.annotation.GetMapping;
import org.springframework.web.bind.annotation.ModelAttribute;
import org.springframework.web.bind.annotation.PathVariable;
import org.springframework.web.bind.annotation.PostMapping;
import org.springframework.web.bind.annotation.RequestParam;
import org.springframework.web.server.ResponseStatusException;
import org.springframework.web.servlet.mvc.support.RedirectAttributes;

/** The console's pages. Reading needs the auditor role; the mode switch needs admin (SecurityConfiguration). */
@Controller
class ConsoleController {

    /** The Chart.js webjar's version (parent pom {@code chartjs.version}); its path carries it. */
    static final String CHART_JS = "/webjars/chart.js/4.4.1/dist/chart.umd.js";

    private final AuditQueries queries;
    private final OverviewService overview;
    private final RuleCatalogView catalog;
    private final StatisticsService statistics;
    private final ExplanationService explanations;
    private final boolean localLogin;

    ConsoleController(
            AuditQueries queries,
            OverviewService overview,
            RuleCatalogView catalog,
            StatisticsService statistics,
            ExplanationService explanations,
            SecurityProperties security) {
        this.queries = queries;
        this.overview = overview;
        this.catalog = catalog;
        this.statistics = statistics;
        this.explanations = explanations;
        this.localLogin = security.mode() == SecurityProperties.Mode.LOCAL;
    }

    @ModelAttribute
    void common(Model model, Authentication who) {
        model.addAttribute("generalCaution", Cautions.GENERAL);
        model.addAttribute("chartJs", CHART_JS);
        model.addAttribute("localLogin", localLogin);
        if (who != null) {
            model.addAttribute("user", who.getName());
            model.addAttribute(
                    "isAdmin",
                    who.getAuthorities().stream().anyMatch(a -> a.getAuthority().equals("ROLE_ADMIN")));
        }
    }

    @GetMapping("/login")
    String login() {
        return "console/login";
    }

    @GetMapping({"/", "/console"})
    String overview(Model model) {
        model.addAttribute("page", "overview");
        model.addAttribute("o", overview.overview());
        model.addAttribute(
                "active", queries.advisories(new AdvisoryFilter(null, null, "ACTIVE", null, null, null, 20, 0)));
        return "console/overview";
    }

    @GetMapping("/console/advisories")
    String advisories(
            @RequestParam(required = false) String rule,
            @RequestParam(required = false) String code,
            @RequestParam(required = false) String status,
            @RequestParam(required = false) String patient,
            @RequestParam(required = false) String from,
            @RequestParam(required = false) String to,
            Model model) {
        Instant start = day(from, "from");
        Instant end = day(to, "to");
        model.addAttribute("page", "advisories");
        model.addAttribute(
                "rows",
                queries.advisories(new AdvisoryFilter(
                        blank(rule),
                        blank(code),
                        blank(status),
                        start,
                        end == null ? null : end.plus(1, ChronoUnit.DAYS),
                        blank(patient),
                        500,
                        0)));
        model.addAttribute("rules", catalog.rules());
        model.addAttribute(
                "f",
                Map.of(
                        "rule",
                        nz(rule),
                        "code",
                        nz(code),
                        "status",
                        nz(status),
                        "patient",
                        nz(patient),
                        "from",
                        nz(from),
                        "to",
                        nz(to)));
        StringBuilder csv = new StringBuilder("/api/v1/advisories?format=csv");
        append(csv, "rule", rule);
        append(csv, "code", code);
        append(csv, "status", status);
        append(csv, "patient", patient);
        if (start != null) {
            append(csv, "from", start.toString());
        }
        if (end != null) {
            append(csv, "to", end.plus(1, ChronoUnit.DAYS).toString());
        }
        model.addAttribute("csv", csv.toString());
        return "console/advisories";
    }

    @GetMapping("/console/advisories/{key}")
    String episode(@PathVariable String key, Model model) {
        model.addAttribute("page", "advisories");
        model.addAttribute(
                "x",
                explanations
                        .explain(key)
                        .orElseThrow(() -> new ResponseStatusException(HttpStatus.NOT_FOUND, "no advisory " + key)));
        return "console/episode";
    }

    @GetMapping("/console/evaluations/{id}")
    String evaluation(@PathVariable long id, Model model) {
        model.addAttribute("page", "advisories");
        model.addAttribute(
                "e",
                queries.evaluation(id)
                        .orElseThrow(() -> new ResponseStatusException(HttpStatus.NOT_FOUND, "no evaluation " + id)));
        return "console/evaluation";
    }

    @GetMapping("/console/patients/{id}")
    String patient(@PathVariable String id, Model model) {
        String patient = id.startsWith("Patient/") ? id.substring(8) : id;
        if (!patient.matches("[A-Za-z0-9\\-.]{1,64}")) {
            throw new ResponseStatusException(HttpStatus.BAD_REQUEST, "not a FHIR resource id");
        }
        model.addAttribute("page", "advisories");
        model.addAttribute("patient", patient);
        model.addAttribute("episodes", queries.advisoriesOf(patient));
        return "console/patient";
    }

    @GetMapping("/console/rules")
    String rules(Model model) {
        Instant now = Instant.now();
        var stats = statistics.statistics(now.minus(30, ChronoUnit.DAYS), now);
        model.addAttribute("page", "rules");
        model.addAttribute("rules", catalog.rules());
        model.addAttribute("stats", byRule(stats.rules()));
        model.addAttribute("stats30", stats);
        return "console/rules";
    }

    @GetMapping("/console/rules/{id}")
    String rule(@PathVariable String id, Model model) {
        Instant now = Instant.now();
        var stats = statistics.statistics(now.minus(30, ChronoUnit.DAYS), now);
        model.addAttribute("page", "rules");
        model.addAttribute(
                "r",
                catalog.rule(id).orElseThrow(() -> new ResponseStatusException(HttpStatus.NOT_FOUND, "no rule " + id)));
        model.addAttribute("s", byRule(stats.rules()).get(id));
        model.addAttribute("stats30", stats);
        model.addAttribute(
                "firings",
                stats.firingsPerDay().stream()
                        .filter(f -> f.ruleId().equals(id))
                        .toList());
        model.addAttribute("changes", queries.modeChanges(id));
        return "console/rule";
    }

    @PostMapping("/console/rules/{id}/mode")
    String switchMode(
            @PathVariable String id,
            @RequestParam String mode,
            @RequestParam(required = false) String reason,
            Authentication who,
            RedirectAttributes redirect) {
        EvaluationMode m = switch (mode) {
            case "SILENT", "silent" -> EvaluationMode.SILENT;
            case "ACTIVE", "active" -> EvaluationMode.ACTIVE;
            default -> throw new ResponseStatusException(HttpStatus.BAD_REQUEST, "mode must be silent or active");
        };
        try {
            catalog.switchMode(id, m, who.getName(), reason);
            redirect.addFlashAttribute(
                    "notice", "Rule " + id + " now runs " + m.name().toLowerCase() + ".");
        } catch (RuleCatalogView.SwitchRefused e) {
            redirect.addFlashAttribute("problem", e.getMessage());
        }
        return "redirect:/console/rules/" + id;
    }

    @GetMapping("/console/quarantine")
    String quarantine(
            @RequestParam(required = false) String reason, @RequestParam(required = false) String stage, Model model) {
        model.addAttribute("page", "quarantine");
        model.addAttribute(
                "rows", queries.quarantine(new QuarantineFilter(blank(reason), blank(stage), null, null, 500, 0)));
        model.addAttribute("f", Map.of("reason", nz(reason), "stage", nz(stage)));
        return "console/quarantine";
    }

    private static Map<String, RuleStatistics> byRule(List<RuleStatistics> rows) {
        return rows.stream().collect(Collectors.toMap(RuleStatistics::ruleId, Function.identity()));
    }

    private static Instant day(String text, String field) {
        if (text == null || text.isBlank()) {
            return null;
        }
        try {
            return LocalDate.parse(text).atStartOfDay(ZoneOffset.UTC).toInstant();
        } catch (DateTimeParseException e) {
            throw new ResponseStatusException(HttpStatus.BAD_REQUEST, field + " must be a date like 2026-12-01");
        }
    }

    private static String blank(String s) {
        return s == null || s.isBlank() ? null : s.trim();
    }

    private static String nz(String s) {
        return s == null ? "" : s;
    }

    private static void append(StringBuilder b, String name, String value) {
        if (value != null && !value.isBlank()) {
            b.append('&')
                    .append(name)
                    .append('=')
                    .append(java.net.URLEncoder.encode(value.trim(), java.nio.charset.StandardCharsets.UTF_8));
        }
    }

    static String hours(Duration d) {
        return d == null ? "" : String.format("%.1f h", d.toMinutes() / 60.0);
    }
}
