package org.lungflag.service.api;

import java.sql.Timestamp;
import java.time.Clock;
import java.time.Duration;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import org.lungflag.rules.catalog.ParameterDefinition;
import org.lungflag.rules.catalog.ParameterOverrides;
import org.lungflag.rules.catalog.RuleCatalog;
import org.lungflag.rules.catalog.RuleDefinition;
import org.lungflag.rules.catalog.RuleSource;
import org.lungflag.rules.index.IndexDefinition;
import org.lungflag.rules.index.IndexDefinitions;
import org.lungflag.rules.index.SiteParameters;
import org.lungflag.service.api.ApiRecords.IndexInputView;
import org.lungflag.service.api.ApiRecords.IndexView;
import org.lungflag.service.api.ApiRecords.ParameterView;
import org.lungflag.service.api.ApiRecords.RuleView;
import org.lungflag.service.api.ApiRecords.SourceView;
import org.lungflag.service.api.ApiRecords.TemporalView;
import org.lungflag.service.api.ApiRecords.TierView;
import org.lungflag.service.evaluation.EvaluationMode;
import org.lungflag.service.evaluation.RuleModes;
import org.lungflag.service.writeback.WritebackMode;
import org.lungflag.service.writeback.WritebackProperties;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.stereotype.Component;
import org.springframework.transaction.support.TransactionTemplate;

/** The rule and index catalogs as they run here (site parameter overrides and modes applied), and mode switches. */
@Component
public class RuleCatalogView {

    private static final Logger log = LoggerFactory.getLogger(RuleCatalogView.class);

    private final RuleCatalog catalog;
    private final ParameterOverrides overrides;
    private final SiteParameters site;
    private final RuleModes modes;
    private final WritebackProperties writeback;
    private final JdbcClient jdbc;
    private final TransactionTemplate tx;
    private final Clock clock;

    RuleCatalogView(
            RuleCatalog catalog,
            ParameterOverrides overrides,
            SiteParameters site,
            RuleModes modes,
            WritebackProperties writeback,
            JdbcClient jdbc,
            TransactionTemplate tx,
            Clock clock) {
        this.catalog = catalog;
        this.overrides = overrides;
        this.site = site;
        this.modes = modes;
        this.writeback = writeback;
        this.jdbc = jdbc;
        this.tx = tx;
        this.clock = clock;
    }

    public List<RuleView> rules() {
        return catalog.rules().stream().map(this::view).toList();
    }

    public Optional<RuleView> rule(String id) {
        return catalog.rule(id).map(this::view);
    }

    public Optional<RuleDefinition> definition(String id) {
        return catalog.rule(id);
    }

    RuleView view(RuleDefinition r) {
        Map<String, Object> effective = overrides.effective(r);
        List<ParameterView> parameters = r.parameters().stream()
                .map(p -> parameter(r, p, effective.get(p.name())))
                .toList();
        var t = r.temporal();
        return new RuleView(
                r.id(),
                r.version(),
                r.digest(),
                r.title(),
                r.population().name().toLowerCase(),
                r.support().stream()
                        .map(s -> s.name().toLowerCase().replace('_', '-'))
                        .sorted()
                        .toList(),
                r.triggers().stream()
                        .map(k -> k.name().toLowerCase().replace('_', '-'))
                        .sorted()
                        .toList(),
                r.sources().stream().map(RuleCatalogView::source).toList(),
                parameters,
                r.tiers().stream()
                        .map(x ->
                                new TierView(x.code(), x.display(), x.priority().name(), x.condition()))
                        .toList(),
                new TemporalView(
                        t.sustainedParameter(),
                        t.consecutiveCountParameter(),
                        t.consecutiveSpacingParameter(),
                        t.resolveAfterParameter(),
                        t.expireAfterParameter()),
                r.caution(),
                modes.mode(r.id()).name(),
                modeOrigin(r.id()));
    }

    static SourceView source(RuleSource s) {
        return new SourceView(
                s.id(), s.citation(), s.supports(), s.tag().name().toLowerCase().replace('_', '-'));
    }

    private static ParameterView parameter(RuleDefinition r, ParameterDefinition p, Object value) {
        String def = text(p.defaultValue());
        String now = text(value == null ? p.defaultValue() : value);
        return new ParameterView(
                p.name(),
                p.type().name().toLowerCase(),
                p.unit(),
                def,
                now,
                !def.equals(now),
                p.source(),
                r.source(p.source()).map(RuleSource::citation).orElse(null),
                p.description());
    }

    static String text(Object value) {
        if (value instanceof Duration d) {
            long minutes = d.toMinutes();
            return minutes % 60 == 0 ? (minutes / 60) + "h" : minutes + "m";
        }
        if (value instanceof Double x && x == Math.rint(x)) {
            return String.valueOf(x.longValue());
        }
        return String.valueOf(value);
    }

    private String modeOrigin(String ruleId) {
        if (writeback.mode() == WritebackMode.SILENT) {
            return "lungflag.writeback.mode is silent: every rule runs silent";
        }
        return jdbc.sql("SELECT changed_by, changed_at FROM rule_mode WHERE rule_id = :id")
                .param("id", ruleId)
                .query((rs, n) -> "switched by " + rs.getString(1) + " at "
                        + rs.getTimestamp(2).toInstant())
                .optional()
                .orElse(
                        writeback.silentRules().contains(ruleId)
                                ? "configured silent (lungflag.writeback.silent-rules)"
                                : "configured default");
    }

    /** Why a switch was refused. */
    public static final class SwitchRefused extends RuntimeException {
        SwitchRefused(String message) {
            super(message);
        }
    }

    /**
     * Switches a rule between silent and active, recording who, when, why and the previous mode in {@code
     * rule_mode_change}, in one transaction.
     */
    public RuleView switchMode(String ruleId, EvaluationMode mode, String by, String reason) {
        RuleDefinition rule = catalog.rule(ruleId).orElseThrow(() -> new SwitchRefused("no rule " + ruleId));
        if (mode == EvaluationMode.ACTIVE && writeback.mode() == WritebackMode.SILENT) {
            throw new SwitchRefused("lungflag.writeback.mode is silent: every rule runs silent whatever its switch"
                    + " says; change that setting first");
        }
        String why = reason == null || reason.isBlank() ? null : reason.strip();
        if (why != null && why.length() > 500) {
            why = why.substring(0, 500);
        }
        String because = why;
        tx.executeWithoutResult(status -> {
            EvaluationMode previous = modes.mode(ruleId);
            modes.set(ruleId, mode, by);
            jdbc.sql("INSERT INTO rule_mode_change (rule_id, previous_mode, new_mode, changed_by, reason, changed_at)"
                            + " VALUES (:rule, :prev, :next, :by, :reason, :now)")
                    .param("rule", ruleId)
                    .param("prev", previous.name())
                    .param("next", mode.name())
                    .param("by", by)
                    .param("reason", because)
                    .param("now", Timestamp.from(clock.instant()))
                    .update();
        });
        log.info("rule {} switched to {} by {}", ruleId, mode, by);
        return view(rule);
    }

    public List<IndexView> indices() {
        return IndexDefinitions.forSite(site).stream()
                .map(RuleCatalogView::index)
                .toList();
    }

    static IndexView index(IndexDefinition d) {
        return new IndexView(
                d.code().code(),
                d.code().display(),
                d.formula().id(),
                d.formula().version(),
                d.formulaText(),
                d.unit(),
                d.code().loinc().orElse(null),
                d.inputs().stream()
                        .map(i -> new IndexInputView(
                                i.symbol(),
                                i.kind() == null
                                        ? null
                                        : i.kind().name().toLowerCase().replace('_', '-'),
                                i.unit(),
                                i.requirement()))
                        .toList(),
                d.validity(),
                d.source());
    }
}
