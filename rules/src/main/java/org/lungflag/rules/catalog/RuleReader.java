package org.lungflag.rules.catalog;

import java.time.Duration;
import java.util.ArrayList;
import java.util.EnumSet;
import java.util.HashSet;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Set;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.lungflag.rules.index.IndexCode;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SupportMode;
import org.lungflag.rules.quality.DataQualityReason;

/**
 * Reads one {@code rule.yaml}: parse (YAML with positions), then check (keys, types, references, CEL) and compile.
 * Every problem is collected with its {@code file:line:col}; nothing is evaluated here.
 */
final class RuleReader {

    static final List<String> ROOT_KEYS = List.of(
            "id",
            "version",
            "title",
            "population",
            "support",
            "triggers",
            "sources",
            "parameters",
            "aggregates",
            "requires",
            "derived",
            "not_evaluable",
            "tiers",
            "temporal",
            "advisory",
            "basis",
            "caution");
    private static final List<String> REQUIRED_ROOT_KEYS = List.of(
            "id",
            "version",
            "title",
            "population",
            "support",
            "triggers",
            "sources",
            "parameters",
            "tiers",
            "temporal",
            "advisory",
            "basis",
            "caution");
    private static final List<String> SOURCE_KEYS = List.of("id", "citation", "supports", "tag");
    private static final List<String> PARAMETER_KEYS =
            List.of("name", "type", "unit", "default", "source", "description");
    private static final List<String> AGGREGATE_KEYS = List.of("name", "function", "of", "window");
    private static final List<String> NOT_EVALUABLE_KEYS = List.of("when", "reason", "detail");
    private static final List<String> TIER_KEYS = List.of("code", "display", "priority", "when");
    private static final List<String> TEMPORAL_KEYS =
            List.of("onset_sustained", "onset_consecutive", "resolve_after", "expire_after");
    private static final List<String> CONSECUTIVE_KEYS = List.of("count", "spacing");
    private static final List<String> BASIS_KEYS = List.of("when", "text");

    private static final Pattern ID = Pattern.compile("[a-z][a-z0-9]*(-[a-z0-9]+)*");
    private static final Pattern NAME = Pattern.compile("[a-z][a-z0-9_]*");
    private static final Pattern SEMVER = Pattern.compile("(0|[1-9][0-9]*)\\.(0|[1-9][0-9]*)\\.(0|[1-9][0-9]*)");
    private static final Pattern DURATION = Pattern.compile("(?:(\\d+)d)?(?:(\\d+)h)?(?:(\\d+)m)?(?:(\\d+)s)?");

    private final String file;
    private final Problems problems;

    private RuleReader(String file, Problems problems) {
        this.file = file;
        this.problems = problems;
    }

    /** Reads and checks one definition; returns {@code null} when it has problems (they are in {@code problems}). */
    static RuleDefinition read(String file, String text, String expectedId, Problems problems) {
        int before = problems.size();
        RuleDefinition rule = new RuleReader(file, problems).read(text, expectedId);
        return problems.size() == before ? rule : null;
    }

    private RuleDefinition read(String text, String expectedId) {
        YamlNode root = YamlNode.parse(file, text, problems);
        if (root == null) {
            return null;
        }
        if (root.type() != YamlNode.Type.MAP) {
            problems.at(root, "a rule definition must be a YAML mapping with keys such as id, version and tiers");
            return null;
        }
        Map<String, YamlNode.Entry> e = keys(root, ROOT_KEYS, REQUIRED_ROOT_KEYS, "the rule definition");
        if (e == null) {
            return null;
        }
        int before = problems.size();

        String id = string(e.get("id"));
        if (id != null && !ID.matcher(id).matches()) {
            problems.at(
                    e.get("id").value(), "the id '" + id + "' must be lower-case words joined by '-', e.g. hypoxemia");
        } else if (id != null && expectedId != null && !id.equals(expectedId)) {
            problems.at(
                    e.get("id").value(),
                    "the id '" + id + "' differs from its folder name '" + expectedId
                            + "'; a rule lives in catalog/<id>/rule.yaml");
        }
        String version = string(e.get("version"));
        if (version != null && !SEMVER.matcher(version).matches()) {
            problems.at(
                    e.get("version").value(),
                    "the version '" + version + "' is not a semantic version like 1.0.0 (major.minor.patch)");
        }
        String title = string(e.get("title"));
        Population population = null;
        String pop = string(e.get("population"));
        if (pop != null) {
            population = Population.fromYaml(pop);
            if (population == null) {
                problems.at(
                        e.get("population").value(),
                        "the population '" + pop + "' is not one of adult, pediatric, any");
            }
        }
        Set<SupportMode> support = support(e.get("support"));
        Set<QuantityKind> triggers = triggers(e.get("triggers"));
        List<RuleSource> sources = sources(e.get("sources"));
        Set<String> sourceIds = new HashSet<>();
        sources.forEach(s -> sourceIds.add(s.id()));
        int beforeParameters = problems.size();
        List<ParameterDefinition> parameters = parameters(e.get("parameters"), sourceIds);
        if (problems.size() > beforeParameters) {
            return null; // references to a broken parameter would only repeat the same problem
        }
        Map<String, ParameterDefinition> params = new LinkedHashMap<>();
        parameters.forEach(p -> params.put(p.name(), p));
        List<Aggregate> aggregates = aggregates(e.get("aggregates"), params);
        Temporal temporal = temporal(e.get("temporal"), params);
        String caution = string(e.get("caution"));
        if (problems.size() > before) {
            return null;
        }

        // --- expressions: compile against the variables the engine binds --------------------------------
        ExpressionCompiler cel = new ExpressionCompiler(file, problems, params, aggregates);
        List<RuleLogic.Derived> derived = new ArrayList<>();
        YamlNode.Entry derivedEntry = e.get("derived");
        if (derivedEntry != null) {
            if (expect(derivedEntry.value(), YamlNode.Type.MAP, "derived must map names to CEL expressions")) {
                for (Map.Entry<String, YamlNode.Entry> d :
                        derivedEntry.value().entries().entrySet()) {
                    String name = d.getKey();
                    YamlNode keyNode = d.getValue().key();
                    if (!NAME.matcher(name).matches()) {
                        problems.at(keyNode, "the derived name '" + name + "' must be lower_case_with_underscores");
                        continue;
                    }
                    if (cel.isDeclared(name)) {
                        problems.at(
                                keyNode,
                                "the derived name '" + name + "' is already a variable the engine binds; choose"
                                        + " another name");
                        continue;
                    }
                    YamlNode exprNode = d.getValue().value();
                    if (!scalarOrProblem(exprNode, "the derived value '" + name + "' must be a CEL expression")) {
                        continue;
                    }
                    ExpressionCompiler.Compiled c = cel.compile(exprNode, null);
                    if (c != null) {
                        cel.declareDerived(name, c.type());
                        derived.add(new RuleLogic.Derived(name, c.type(), exprNode.scalar(), cel.program(c)));
                    }
                }
            }
        }

        List<String> requires = new ArrayList<>();
        YamlNode.Entry requiresEntry = e.get("requires");
        if (requiresEntry != null
                && expect(requiresEntry.value(), YamlNode.Type.LIST, "requires must be a list of variable names")) {
            for (YamlNode item : requiresEntry.value().items()) {
                if (!scalarOrProblem(item, "each entry of requires is a variable name, e.g. pf_ratio")) {
                    continue;
                }
                String name = item.scalar();
                RuleVariables.Variable v = RuleVariables.standard().get(name);
                if (v == null || v.availability().isEmpty()) {
                    problems.at(
                            item,
                            "requires lists value variables with an _available companion (an index such as"
                                    + " pf_ratio or a measurement such as plateau_pressure); '" + name
                                    + "' is not one");
                    continue;
                }
                requires.add(name);
                cel.markGuarded(name);
            }
        }

        List<RuleLogic.NotEvaluableCase> notEvaluable = new ArrayList<>();
        List<String> decisionParts = new ArrayList<>();
        YamlNode.Entry neEntry = e.get("not_evaluable");
        if (neEntry != null && expect(neEntry.value(), YamlNode.Type.LIST, "not_evaluable must be a list of cases")) {
            for (YamlNode item : neEntry.value().items()) {
                Map<String, YamlNode.Entry> ne =
                        keys(item, NOT_EVALUABLE_KEYS, NOT_EVALUABLE_KEYS, "a not_evaluable case");
                if (ne == null) {
                    continue;
                }
                String code = string(ne.get("reason"));
                DataQualityReason reason =
                        code == null ? null : DataQualityReason.fromCode(code).orElse(null);
                if (code != null && reason == null) {
                    problems.at(
                            ne.get("reason").value(),
                            "'" + code + "' is not a data-quality code; use one of the not-evaluable codes such as"
                                    + " missing-peep or support-not-qualifying");
                } else if (reason != null && reason.use() != DataQualityReason.Use.NOT_EVALUABLE) {
                    problems.at(
                            ne.get("reason").value(),
                            "'" + code + "' is a code for refused or repaired input, not a reason a rule is not"
                                    + " evaluable");
                }
                Template detail = template(ne.get("detail").value(), cel);
                ExpressionCompiler.Compiled c = scalarOrProblem(ne.get("when").value(), "when must be a CEL condition")
                        ? cel.compile(ne.get("when").value(), VariableType.BOOL)
                        : null;
                if (c != null && reason != null && detail != null) {
                    notEvaluable.add(new RuleLogic.NotEvaluableCase(
                            ne.get("when").value().scalar(), reason, detail));
                    decisionParts.add(ne.get("when").value().scalar());
                }
            }
        }

        List<Tier> tiers = new ArrayList<>();
        List<String> tierConditions = new ArrayList<>();
        YamlNode.Entry tiersEntry = e.get("tiers");
        if (expect(tiersEntry.value(), YamlNode.Type.LIST, "tiers must be a list, mildest tier first")) {
            List<YamlNode> items = tiersEntry.value().items();
            if (items.isEmpty()) {
                problems.at(tiersEntry.value(), "a rule needs at least one tier");
            }
            Set<String> codes = new HashSet<>();
            for (YamlNode item : items) {
                Map<String, YamlNode.Entry> t = keys(item, TIER_KEYS, TIER_KEYS, "a tier");
                if (t == null) {
                    continue;
                }
                String code = string(t.get("code"));
                if (code != null && !AdvisoryCodes.isKnown(code)) {
                    problems.at(
                            t.get("code").value(),
                            "'" + code + "' is not an advisory code of design.md; use one of "
                                    + String.join(", ", AdvisoryCodes.ALL));
                } else if (code != null && !codes.add(code)) {
                    problems.at(t.get("code").value(), "the tier code '" + code + "' appears twice in this rule");
                }
                String display = string(t.get("display"));
                String pr = string(t.get("priority"));
                FlagPriority priority =
                        pr == null ? null : FlagPriority.fromCode(pr).orElse(null);
                if (pr != null && priority == null) {
                    problems.at(
                            t.get("priority").value(),
                            "the priority '" + pr + "' is not a FHIR flag-priority code (PN, PL, PM or PH)");
                }
                ExpressionCompiler.Compiled c = scalarOrProblem(t.get("when").value(), "when must be a CEL condition")
                        ? cel.compile(t.get("when").value(), VariableType.BOOL)
                        : null;
                if (code != null && display != null && priority != null && c != null) {
                    tiers.add(new Tier(
                            code, display, priority, t.get("when").value().scalar(), tiers.size()));
                    tierConditions.add(t.get("when").value().scalar());
                }
            }
        }

        Template advisory = template(e.get("advisory").value(), cel);
        List<RuleLogic.BasisFragment> basis = new ArrayList<>();
        YamlNode.Entry basisEntry = e.get("basis");
        if (expect(basisEntry.value(), YamlNode.Type.LIST, "basis must be a list of text fragments")) {
            for (YamlNode item : basisEntry.value().items()) {
                Map<String, YamlNode.Entry> b = keys(item, BASIS_KEYS, List.of("text"), "a basis fragment");
                if (b == null) {
                    continue;
                }
                Template t = template(b.get("text").value(), cel);
                ExpressionCompiler.Compiled when = null;
                String whenText = null;
                if (b.containsKey("when")) {
                    if (scalarOrProblem(b.get("when").value(), "when must be a CEL condition")) {
                        when = cel.compile(b.get("when").value(), VariableType.BOOL);
                        whenText = b.get("when").value().scalar();
                    }
                    if (when == null) {
                        continue;
                    }
                }
                if (t != null) {
                    basis.add(new RuleLogic.BasisFragment(whenText, when == null ? null : cel.program(when), t));
                }
            }
        }

        cel.checkGuards();
        if (problems.size() > before) {
            return null;
        }
        RuleLogic logic = new RuleLogic(
                derived,
                cel.decisionProgram(decisionParts, tierConditions),
                notEvaluable,
                requires,
                basis,
                advisory,
                cel.referencedStandardVariables());
        return new RuleDefinition(
                id,
                version,
                CatalogLock.digest(text),
                title,
                population,
                support,
                triggers,
                sources,
                parameters,
                aggregates,
                tiers,
                temporal,
                caution,
                file,
                logic);
    }

    // --- structure helpers --------------------------------------------------------------------------------

    /** Checks a mapping's keys: unknown keys, duplicates, missing required keys. Returns null if not a mapping. */
    private Map<String, YamlNode.Entry> keys(YamlNode node, List<String> allowed, List<String> required, String what) {
        if (node.type() != YamlNode.Type.MAP) {
            problems.at(node, what + " must be a mapping with the keys " + String.join(", ", allowed));
            return null;
        }
        for (YamlNode dup : node.duplicateKeys()) {
            problems.at(dup, "the key '" + dup.scalar() + "' appears twice in " + what);
        }
        Map<String, YamlNode.Entry> entries = node.entries();
        boolean ok = true;
        for (Map.Entry<String, YamlNode.Entry> en : entries.entrySet()) {
            if (!allowed.contains(en.getKey())) {
                problems.at(
                        en.getValue().key(),
                        "unknown key '" + en.getKey() + "' in " + what + suggestion(en.getKey(), allowed)
                                + "; allowed keys: " + String.join(", ", allowed));
                ok = false;
            }
        }
        for (String r : required) {
            if (!entries.containsKey(r)) {
                problems.at(node, what + " is missing the required key '" + r + "'");
                ok = false;
            }
        }
        return ok ? entries : null;
    }

    static String suggestion(String name, java.util.Collection<String> candidates) {
        String best = null;
        int bestDistance = 3;
        for (String c : candidates) {
            int d = distance(name, c);
            if (d < bestDistance) {
                bestDistance = d;
                best = c;
            }
        }
        return best == null ? "" : " (did you mean '" + best + "'?)";
    }

    private static int distance(String a, String b) {
        int[] prev = new int[b.length() + 1];
        int[] cur = new int[b.length() + 1];
        for (int j = 0; j <= b.length(); j++) {
            prev[j] = j;
        }
        for (int i = 1; i <= a.length(); i++) {
            cur[0] = i;
            for (int j = 1; j <= b.length(); j++) {
                int cost = a.charAt(i - 1) == b.charAt(j - 1) ? 0 : 1;
                cur[j] = Math.min(Math.min(cur[j - 1] + 1, prev[j] + 1), prev[j - 1] + cost);
            }
            int[] t = prev;
            prev = cur;
            cur = t;
        }
        return prev[b.length()];
    }

    private boolean expect(YamlNode node, YamlNode.Type type, String message) {
        if (node.type() != type) {
            problems.at(node, message);
            return false;
        }
        return true;
    }

    private boolean scalarOrProblem(YamlNode node, String message) {
        if (!node.isScalar()) {
            problems.at(node, message);
            return false;
        }
        return true;
    }

    private String string(YamlNode.Entry entry) {
        if (entry == null) {
            return null;
        }
        YamlNode v = entry.value();
        if (!v.isScalar()) {
            problems.at(v, "'" + entry.key().scalar() + "' must be a single text value, not a list or mapping");
            return null;
        }
        if (v.scalar().isBlank()) {
            problems.at(v, "'" + entry.key().scalar() + "' must not be empty");
            return null;
        }
        return v.scalar().strip();
    }

    private Set<SupportMode> support(YamlNode.Entry entry) {
        Set<SupportMode> out = EnumSet.noneOf(SupportMode.class);
        if (!expect(
                entry.value(),
                YamlNode.Type.LIST,
                "support must be a list of support modes, e.g. [invasive-ventilation], or [any]")) {
            return out;
        }
        List<String> allowed = new ArrayList<>();
        for (SupportMode m : SupportMode.values()) {
            allowed.add(kebab(m.name()));
        }
        for (YamlNode item : entry.value().items()) {
            if (!scalarOrProblem(item, "each support entry is a support mode such as invasive-ventilation")) {
                continue;
            }
            String s = item.scalar();
            if (s.equals("any")) {
                continue;
            }
            int i = allowed.indexOf(s);
            if (i < 0) {
                problems.at(
                        item,
                        "unknown support mode '" + s + "'" + suggestion(s, allowed) + "; use any or one of "
                                + String.join(", ", allowed));
            } else {
                out.add(SupportMode.values()[i]);
            }
        }
        return out;
    }

    private Set<QuantityKind> triggers(YamlNode.Entry entry) {
        Set<QuantityKind> out = EnumSet.noneOf(QuantityKind.class);
        if (!expect(entry.value(), YamlNode.Type.LIST, "triggers must be a list of fact kinds, e.g. [pao2, spo2]")) {
            return out;
        }
        List<String> allowed = new ArrayList<>();
        for (QuantityKind k : QuantityKind.values()) {
            allowed.add(kebab(k.name()));
        }
        for (YamlNode item : entry.value().items()) {
            if (!scalarOrProblem(item, "each trigger is a fact kind such as pao2")) {
                continue;
            }
            int i = allowed.indexOf(item.scalar());
            if (i < 0) {
                problems.at(
                        item,
                        "unknown fact kind '" + item.scalar() + "'" + suggestion(item.scalar(), allowed)
                                + "; use one of " + String.join(", ", allowed));
            } else {
                out.add(QuantityKind.values()[i]);
            }
        }
        if (entry.value().items().isEmpty()) {
            problems.at(entry.value(), "a rule needs at least one trigger, or it is never evaluated");
        }
        return out;
    }

    static String kebab(String enumName) {
        return enumName.toLowerCase(Locale.ROOT).replace('_', '-');
    }

    private List<RuleSource> sources(YamlNode.Entry entry) {
        List<RuleSource> out = new ArrayList<>();
        if (!expect(entry.value(), YamlNode.Type.LIST, "sources must be a list of cited sources")) {
            return out;
        }
        Set<String> ids = new HashSet<>();
        for (YamlNode item : entry.value().items()) {
            Map<String, YamlNode.Entry> s = keys(item, SOURCE_KEYS, SOURCE_KEYS, "a source");
            if (s == null) {
                continue;
            }
            String id = string(s.get("id"));
            String tagText = string(s.get("tag"));
            SourceTag tag = tagText == null ? null : SourceTag.fromYaml(tagText);
            if (tagText != null && tag == null) {
                problems.at(
                        s.get("tag").value(),
                        "the source tag '" + tagText + "' is not one of published, rule-of-thumb, unverified");
            }
            if (id != null && !ids.add(id)) {
                problems.at(s.get("id").value(), "the source id '" + id + "' appears twice");
            }
            String citation = string(s.get("citation"));
            String supports = string(s.get("supports"));
            if (id != null && tag != null && citation != null && supports != null) {
                out.add(new RuleSource(id, citation, supports, tag));
            }
        }
        return out;
    }

    private List<ParameterDefinition> parameters(YamlNode.Entry entry, Set<String> sourceIds) {
        List<ParameterDefinition> out = new ArrayList<>();
        if (!expect(entry.value(), YamlNode.Type.LIST, "parameters must be a list of declared thresholds")) {
            return out;
        }
        Set<String> names = new HashSet<>();
        for (YamlNode item : entry.value().items()) {
            Map<String, YamlNode.Entry> p = keys(item, PARAMETER_KEYS, PARAMETER_KEYS, "a parameter");
            if (p == null) {
                continue;
            }
            String name = string(p.get("name"));
            if (name != null && !NAME.matcher(name).matches()) {
                problems.at(
                        p.get("name").value(), "the parameter name '" + name + "' must be lower_case_with_underscores");
                name = null;
            } else if (name != null && !names.add(name)) {
                problems.at(p.get("name").value(), "the parameter '" + name + "' is declared twice");
                name = null;
            }
            String typeText = string(p.get("type"));
            ParameterType type = typeText == null ? null : ParameterType.fromYaml(typeText);
            if (typeText != null && type == null) {
                problems.at(
                        p.get("type").value(),
                        "the parameter type '" + typeText + "' is not one of number, integer, boolean, duration");
            }
            YamlNode unitNode = p.get("unit").value();
            String unit = unitNode.isScalar() ? unitNode.scalar().strip() : null;
            if (unit == null) {
                problems.at(unitNode, "unit must be a UCUM unit such as mm[Hg], or an empty string \"\"");
            }
            String source = string(p.get("source"));
            if (source != null && !sourceIds.contains(source)) {
                problems.at(
                        p.get("source").value(),
                        "the source '" + source + "' is not declared under sources" + suggestion(source, sourceIds));
            }
            String description = string(p.get("description"));
            Object value = type == null ? null : value(p.get("default").value(), type, "the default of " + name);
            if (name != null
                    && type != null
                    && unit != null
                    && source != null
                    && description != null
                    && value != null) {
                out.add(new ParameterDefinition(name, type, unit, value, source, description));
            }
        }
        return out;
    }

    /** Reads a scalar as a value of the given type, or reports why it cannot. */
    private Object value(YamlNode node, ParameterType type, String what) {
        if (!node.isScalar()) {
            problems.at(node, what + " must be a single value");
            return null;
        }
        try {
            return ParameterOverrides.convert(node.scalar().strip(), type);
        } catch (IllegalArgumentException ex) {
            problems.at(node, what + ": " + ex.getMessage());
            return null;
        }
    }

    static Duration parseDuration(String text) {
        Matcher m = DURATION.matcher(text);
        if (text.isEmpty() || !m.matches()) {
            throw new IllegalArgumentException("'" + text + "' is not a duration; write e.g. 6h, 90m, 1d or 1h30m");
        }
        Duration d = Duration.ZERO;
        if (m.group(1) != null) {
            d = d.plusDays(Long.parseLong(m.group(1)));
        }
        if (m.group(2) != null) {
            d = d.plusHours(Long.parseLong(m.group(2)));
        }
        if (m.group(3) != null) {
            d = d.plusMinutes(Long.parseLong(m.group(3)));
        }
        if (m.group(4) != null) {
            d = d.plusSeconds(Long.parseLong(m.group(4)));
        }
        return d;
    }

    private List<Aggregate> aggregates(YamlNode.Entry entry, Map<String, ParameterDefinition> params) {
        List<Aggregate> out = new ArrayList<>();
        if (entry == null) {
            return out;
        }
        if (!expect(entry.value(), YamlNode.Type.LIST, "aggregates must be a list of window aggregates")) {
            return out;
        }
        Set<String> names = new HashSet<>();
        for (YamlNode item : entry.value().items()) {
            Map<String, YamlNode.Entry> a = keys(item, AGGREGATE_KEYS, AGGREGATE_KEYS, "an aggregate");
            if (a == null) {
                continue;
            }
            String name = string(a.get("name"));
            if (name != null
                    && (!NAME.matcher(name).matches()
                            || RuleVariables.standard().containsKey(name))) {
                problems.at(
                        a.get("name").value(),
                        "the aggregate name '" + name + "' must be lower_case_with_underscores and not a variable the"
                                + " engine already binds");
                name = null;
            } else if (name != null && !names.add(name)) {
                problems.at(a.get("name").value(), "the aggregate '" + name + "' is declared twice");
                name = null;
            }
            String fn = string(a.get("function"));
            AggregateFunction function = fn == null ? null : AggregateFunction.fromYaml(fn);
            if (fn != null && function == null) {
                problems.at(
                        a.get("function").value(),
                        "the aggregate function '" + fn + "' is not one of min, max, mean, first, last, count");
            }
            String of = string(a.get("of"));
            IndexCode index = null;
            QuantityKind kind = null;
            if (of != null) {
                index = IndexCode.fromCode(of).orElse(null);
                if (index == null) {
                    for (QuantityKind k : QuantityKind.values()) {
                        if (!k.isCategorical() && kebab(k.name()).equals(of)) {
                            kind = k;
                        }
                    }
                }
                if (index == null && kind == null) {
                    problems.at(
                            a.get("of").value(),
                            "'" + of + "' is neither an index code (e.g. ventilatory-ratio) nor a numeric fact kind"
                                    + " (e.g. pao2)");
                }
            }
            String window = durationParameter(a.get("window"), params);
            if (name != null && function != null && (index != null || kind != null) && window != null) {
                out.add(new Aggregate(name, function, index, kind, window));
            }
        }
        return out;
    }

    private String durationParameter(YamlNode.Entry entry, Map<String, ParameterDefinition> params) {
        return typedParameter(entry, params, ParameterType.DURATION);
    }

    private String typedParameter(YamlNode.Entry entry, Map<String, ParameterDefinition> params, ParameterType type) {
        String name = string(entry);
        if (name == null) {
            return null;
        }
        ParameterDefinition p = params.get(name);
        if (p == null) {
            boolean looksLiteral = !NAME.matcher(name).matches();
            problems.at(
                    entry.value(),
                    looksLiteral
                            ? "'" + name + "' must name a declared " + type.yamlName() + " parameter, not a literal:"
                                    + " every threshold is a parameter (e.g. declare resolve_after: 6h under"
                                    + " parameters and write its name here)"
                            : "the parameter '" + name + "' is not declared under parameters"
                                    + suggestion(name, params.keySet()));
            return null;
        }
        if (p.type() != type) {
            problems.at(
                    entry.value(),
                    "the parameter '" + name + "' is a " + p.type().yamlName() + ", but a " + type.yamlName()
                            + " is needed here");
            return null;
        }
        return name;
    }

    private Temporal temporal(YamlNode.Entry entry, Map<String, ParameterDefinition> params) {
        Map<String, YamlNode.Entry> t =
                keys(entry.value(), TEMPORAL_KEYS, List.of("resolve_after", "expire_after"), "temporal");
        if (t == null) {
            return null;
        }
        String sustained =
                t.containsKey("onset_sustained") ? durationParameter(t.get("onset_sustained"), params) : null;
        String count = null;
        String spacing = null;
        if (t.containsKey("onset_consecutive")) {
            Map<String, YamlNode.Entry> c =
                    keys(t.get("onset_consecutive").value(), CONSECUTIVE_KEYS, CONSECUTIVE_KEYS, "onset_consecutive");
            if (c != null) {
                count = typedParameter(c.get("count"), params, ParameterType.INTEGER);
                spacing = durationParameter(c.get("spacing"), params);
            }
        }
        if (sustained != null && count != null) {
            problems.at(entry.value(), "use either onset_sustained or onset_consecutive, not both, in one rule");
        }
        String resolve = durationParameter(t.get("resolve_after"), params);
        String expire = durationParameter(t.get("expire_after"), params);
        return new Temporal(sustained, count, spacing, resolve, expire);
    }

    private Template template(YamlNode node, ExpressionCompiler cel) {
        if (!scalarOrProblem(node, "a text must be a single string")) {
            return null;
        }
        String text = node.scalar();
        List<String> local = new ArrayList<>();
        Template t = Template.parse(text, (offset, message) -> {
            int[] pos = positionOfOffset(node, text, offset);
            problems.add(file, pos[0], pos[1], message);
            local.add(message);
        });
        if (t == null) {
            return null;
        }
        for (Template.Placeholder ph : t.placeholders()) {
            String problem = cel.placeholderProblem(ph);
            if (problem != null) {
                int[] pos = positionOfOffset(node, text, ph.offset());
                problems.add(file, pos[0], pos[1], problem);
                local.add(problem);
            }
        }
        return local.isEmpty() ? t : null;
    }

    static int[] positionOfOffset(YamlNode node, String text, int offset) {
        int line = 1;
        int col = 0;
        for (int i = 0; i < offset && i < text.length(); i++) {
            if (text.charAt(i) == '\n') {
                line++;
                col = 0;
            } else {
                col++;
            }
        }
        return node.positionOf(line, col);
    }
}
