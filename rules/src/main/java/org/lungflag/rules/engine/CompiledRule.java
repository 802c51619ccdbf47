package org.lungflag.rules.engine;

import java.time.Duration;
import java.util.Collections;
import java.util.HashMap;
import java.util.LinkedHashMap;
import java.util.Map;
import org.lungflag.rules.catalog.Aggregate;
import org.lungflag.rules.catalog.ParameterDefinition;
import org.lungflag.rules.catalog.ParameterOverrides;
import org.lungflag.rules.catalog.RuleDefinition;
import org.lungflag.rules.catalog.RuleLogic;
import org.lungflag.rules.catalog.Template;
import org.lungflag.rules.catalog.Temporal;

/** A rule with the parameter values in effect resolved once, ready to evaluate cheaply. */
final class CompiledRule {

    final RuleDefinition definition;
    /** {@code params.<name>} → value as CEL wants it (Double, Long, Boolean). */
    final Map<String, Object> celParameters;
    /** duration parameter name → value. */
    final Map<String, Duration> durations;
    /** parameter name → value with unit, for the explanation. */
    final Map<String, String> parameterTexts;

    final Map<String, RuleLogic.Derived> derived;
    final Duration sustained;
    final long consecutiveCount;
    final Duration consecutiveSpacing;
    final Duration resolveAfter;
    final Duration expireAfter;
    /** The general caution, the rule's own, and the same with the pulse-oximetry caution added. */
    final String caution;

    final String cautionWithPulseOximetry;

    /**
     * Per basis fragment, the variable its condition consists of when the condition is a bare identifier (e.g.
     * {@code use_pf}), else null: such a condition is read from the scope without a CEL run when it holds a Boolean.
     */
    final String[] basisVariables;

    /** Derived values whose expression is a bare identifier: name → that identifier. */
    final Map<String, String> derivedVariables;

    /** The supports the rule applies to, in words, joined by "or" (for the support-not-qualifying detail). */
    final String supportText;

    /** The longest window of an index aggregate (how much history to keep), or zero. */
    final Duration historyWindow;

    /** The indices the rule's aggregates read, whose values are kept as history. */
    final java.util.Set<org.lungflag.rules.index.IndexCode> historyIndices;

    CompiledRule(RuleDefinition definition, ParameterOverrides overrides) {
        this.definition = definition;
        Map<String, Object> cel = new HashMap<>();
        Map<String, Duration> d = new HashMap<>();
        Map<String, String> texts = new LinkedHashMap<>();
        for (ParameterDefinition p : definition.parameters()) {
            Object v = overrides.value(definition, p);
            if (v instanceof Duration dur) {
                d.put(p.name(), dur);
                texts.put(p.name(), formatDuration(dur));
            } else {
                cel.put("params." + p.name(), v);
                String text = v instanceof Double dv ? Template.formatNumber(dv, -1) : String.valueOf(v);
                texts.put(p.name(), p.unit().isEmpty() || p.unit().equals("1") ? text : text + " " + p.unit());
            }
        }
        this.celParameters = Collections.unmodifiableMap(cel);
        this.durations = Collections.unmodifiableMap(d);
        this.parameterTexts = Map.copyOf(texts);
        Map<String, RuleLogic.Derived> dv = new HashMap<>();
        definition.logic().derived().forEach(x -> dv.put(x.name(), x));
        this.derived = Collections.unmodifiableMap(dv);
        Map<String, String> aliases = new HashMap<>();
        for (RuleLogic.Derived x : definition.logic().derived()) {
            String v = bareIdentifier(x.expression());
            if (v != null) {
                aliases.put(x.name(), v);
            }
        }
        this.derivedVariables = Collections.unmodifiableMap(aliases);
        java.util.List<RuleLogic.BasisFragment> basis = definition.logic().basis();
        this.basisVariables = new String[basis.size()];
        for (int i = 0; i < basis.size(); i++) {
            RuleLogic.BasisFragment f = basis.get(i);
            basisVariables[i] = f.when() == null ? null : bareIdentifier(f.condition());
        }
        Temporal t = definition.temporal();
        this.sustained = t.sustainedParameter() == null ? null : d.get(t.sustainedParameter());
        this.consecutiveCount = t.consecutiveCountParameter() == null
                ? 0
                : ((Number) cel.get("params." + t.consecutiveCountParameter())).longValue();
        this.consecutiveSpacing =
                t.consecutiveSpacingParameter() == null ? Duration.ZERO : d.get(t.consecutiveSpacingParameter());
        this.resolveAfter = d.get(t.resolveAfterParameter());
        this.expireAfter = d.get(t.expireAfterParameter());
        Duration h = Duration.ZERO;
        for (Aggregate a : definition.aggregates()) {
            if (a.index() != null && d.get(a.windowParameter()).compareTo(h) > 0) {
                h = d.get(a.windowParameter());
            }
        }
        this.historyWindow = h;
        java.util.Set<org.lungflag.rules.index.IndexCode> codes =
                java.util.EnumSet.noneOf(org.lungflag.rules.index.IndexCode.class);
        for (Aggregate a : definition.aggregates()) {
            if (a.index() != null) {
                codes.add(a.index());
            }
        }
        this.historyIndices = java.util.Collections.unmodifiableSet(codes);
        this.supportText = String.join(
                " or ",
                definition.support().stream().sorted().map(Texts::support).toList());
        this.caution = org.lungflag.rules.catalog.Cautions.GENERAL + " " + definition.caution();
        this.cautionWithPulseOximetry = caution + " " + org.lungflag.rules.catalog.Cautions.PULSE_OXIMETRY;
    }

    /** The identifier {@code expression} consists of (surrounding blanks aside), or null. */
    static String bareIdentifier(String expression) {
        if (expression == null) {
            return null;
        }
        String e = expression.strip();
        if (e.isEmpty() || !(Character.isLetter(e.charAt(0)) && e.charAt(0) < 128 || e.charAt(0) == '_')) {
            return null;
        }
        for (int i = 1; i < e.length(); i++) {
            char c = e.charAt(i);
            boolean ok = (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9') || c == '_';
            if (!ok) {
                return null;
            }
        }
        return switch (e) {
            case "true",
                    "false",
                    "null",
                    "in",
                    "as",
                    "break",
                    "const",
                    "continue",
                    "else",
                    "for",
                    "function",
                    "if",
                    "import",
                    "let",
                    "loop",
                    "package",
                    "namespace",
                    "return",
                    "var",
                    "void",
                    "while" -> null;
            default -> e;
        };
    }

    static String formatDuration(Duration d) {
        long minutes = d.toMinutes();
        if (minutes % (24 * 60) == 0 && minutes >= 48 * 60) {
            return (minutes / (24 * 60)) + " d";
        }
        if (minutes % 60 == 0) {
            return (minutes / 60) + " h";
        }
        if (d.toSeconds() % 60 == 0) {
            return minutes + " min";
        }
        return d.toSeconds() + " s";
    }
}
