package org.lungflag.rules.catalog;

import dev.cel.common.CelAbstractSyntaxTree;
import dev.cel.common.CelIssue;
import dev.cel.common.CelOptions;
import dev.cel.common.CelSourceLocation;
import dev.cel.common.CelValidationResult;
import dev.cel.common.ast.CelConstant;
import dev.cel.common.ast.CelExpr;
import dev.cel.common.navigation.CelNavigableAst;
import dev.cel.common.navigation.CelNavigableExpr;
import dev.cel.common.types.CelType;
import dev.cel.common.types.SimpleType;
import dev.cel.compiler.CelCompiler;
import dev.cel.compiler.CelCompilerBuilder;
import dev.cel.compiler.CelCompilerFactory;
import dev.cel.runtime.CelEvaluationException;
import dev.cel.runtime.CelRuntime;
import dev.cel.runtime.CelRuntimeFactory;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.LinkedHashSet;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.TreeSet;

/**
 * Compiles one rule's CEL expressions against the variables the engine binds, its parameters, aggregates and
 * derived values, and lints them: no numeric literals (thresholds are parameters), no unknown string constants, and
 * every value variable guarded by its {@code _available} companion. CEL's positions are mapped back to the file.
 */
final class ExpressionCompiler {

    static final CelOptions OPTIONS =
            CelOptions.current().enableHeterogeneousNumericComparisons(true).build();

    private static final CelRuntime RUNTIME =
            CelRuntimeFactory.standardCelRuntimeBuilder().setOptions(OPTIONS).build();

    /** A compiled expression with its type. */
    record Compiled(CelAbstractSyntaxTree ast, VariableType type) {}

    private final String file;
    private final Problems problems;
    private final Map<String, ParameterDefinition> params;
    private final Map<String, VariableType> declared = new LinkedHashMap<>();
    private final Set<String> aggregateNames = new LinkedHashSet<>();
    private final Set<String> derivedNames = new LinkedHashSet<>();
    private CelCompiler compiler;

    /** Value variable → where it is first read (for the guard check). */
    private final Map<String, int[]> valueReads = new LinkedHashMap<>();

    private final Set<String> guarded = new LinkedHashSet<>();
    private final Set<String> referenced = new LinkedHashSet<>();

    ExpressionCompiler(
            String file, Problems problems, Map<String, ParameterDefinition> params, List<Aggregate> aggregates) {
        this.file = file;
        this.problems = problems;
        this.params = params;
        CelCompilerBuilder b = CelCompilerFactory.standardCelCompilerBuilder().setOptions(OPTIONS);
        for (RuleVariables.Variable v : RuleVariables.standard().values()) {
            b.addVar(v.name(), celType(v.type()));
            declared.put(v.name(), v.type());
        }
        for (ParameterDefinition p : params.values()) {
            VariableType t = switch (p.type()) {
                case NUMBER -> VariableType.DOUBLE;
                case INTEGER -> VariableType.INT;
                case BOOLEAN -> VariableType.BOOL;
                case DURATION -> null;
            };
            if (t != null) {
                b.addVar("params." + p.name(), celType(t));
                declared.put("params." + p.name(), t);
            }
        }
        for (Aggregate a : aggregates) {
            VariableType t = a.function() == AggregateFunction.COUNT ? VariableType.INT : VariableType.DOUBLE;
            b.addVar(a.name(), celType(t));
            b.addVar(a.name() + "_available", SimpleType.BOOL);
            b.addVar(a.name() + "_count", SimpleType.INT);
            declared.put(a.name(), t);
            declared.put(a.name() + "_available", VariableType.BOOL);
            declared.put(a.name() + "_count", VariableType.INT);
            if (a.function() != AggregateFunction.COUNT) {
                aggregateNames.add(a.name()); // a count is 0 when the window is empty, never NaN
            }
        }
        this.compiler = b.build();
    }

    static CelRuntime runtime() {
        return RUNTIME;
    }

    private static CelType celType(VariableType t) {
        return switch (t) {
            case DOUBLE -> SimpleType.DOUBLE;
            case INT -> SimpleType.INT;
            case BOOL -> SimpleType.BOOL;
            case STRING -> SimpleType.STRING;
        };
    }

    private static VariableType variableType(CelType t) {
        if (t.equals(SimpleType.DOUBLE)) {
            return VariableType.DOUBLE;
        }
        if (t.equals(SimpleType.INT)) {
            return VariableType.INT;
        }
        if (t.equals(SimpleType.BOOL)) {
            return VariableType.BOOL;
        }
        if (t.equals(SimpleType.STRING)) {
            return VariableType.STRING;
        }
        return null;
    }

    boolean isDeclared(String name) {
        return declared.containsKey(name);
    }

    void declareDerived(String name, VariableType type) {
        compiler = compiler.toCompilerBuilder().addVar(name, celType(type)).build();
        declared.put(name, type);
        derivedNames.add(name);
    }

    /** Marks a value variable as guarded (it is listed under requires). */
    void markGuarded(String name) {
        guarded.add(name);
    }

    /**
     * Parses, lints and type-checks one expression held in a YAML scalar. Returns null (with problems reported at
     * the right file position) when it is not valid. {@code expected} is the required result type, or null.
     */
    Compiled compile(YamlNode node, VariableType expected) {
        String text = node.scalar();
        if (text.isBlank()) {
            problems.at(node, "the expression is empty");
            return null;
        }
        CelValidationResult parsed = compiler.parse(text);
        if (parsed.hasError()) {
            report(node, text, parsed.getErrors(), "syntax error in the expression: ");
            return null;
        }
        CelAbstractSyntaxTree parsedAst;
        try {
            parsedAst = parsed.getAst();
        } catch (Exception e) {
            problems.at(node, "the expression could not be parsed: " + e.getMessage());
            return null;
        }
        boolean lintOk = lint(node, parsedAst);
        CelValidationResult checked = compiler.check(parsedAst);
        if (checked.hasError()) {
            report(node, text, checked.getErrors(), "");
            return null;
        }
        if (!lintOk) {
            return null;
        }
        CelAbstractSyntaxTree ast;
        try {
            ast = checked.getAst();
        } catch (Exception e) {
            problems.at(node, "the expression could not be checked: " + e.getMessage());
            return null;
        }
        VariableType type = variableType(ast.getResultType());
        if (type == null) {
            problems.at(
                    node,
                    "the expression gives a " + ast.getResultType().name()
                            + "; a rule expression must give a number, a whole number, true/false or a text");
            return null;
        }
        if (expected != null && type != expected) {
            problems.at(
                    node,
                    "a condition must be true or false, but this expression gives a "
                            + type.name().toLowerCase(java.util.Locale.ROOT));
            return null;
        }
        recordReferences(node, ast);
        return new Compiled(ast, type);
    }

    RuleExpression program(Compiled c) {
        try {
            return RuleExpression.of(c.ast(), RUNTIME.createProgram(c.ast()));
        } catch (CelEvaluationException e) {
            throw new IllegalStateException("a checked expression could not be planned", e);
        }
    }

    /** Lints the parsed AST: numeric literals and unknown string constants. */
    private boolean lint(YamlNode node, CelAbstractSyntaxTree ast) {
        boolean ok = true;
        List<CelNavigableExpr> nodes =
                CelNavigableAst.fromAst(ast).getRoot().allNodes().toList();
        for (CelNavigableExpr n : nodes) {
            if (n.getKind() != CelExpr.ExprKind.Kind.CONSTANT) {
                continue;
            }
            CelConstant c = n.expr().constant();
            int[] pos = position(node, ast, n.id());
            switch (c.getKind()) {
                case INT64_VALUE -> {
                    if (c.int64Value() != 0 && c.int64Value() != 1) {
                        problems.add(file, pos[0], pos[1], literalMessage(Long.toString(c.int64Value())));
                        ok = false;
                    }
                }
                case DOUBLE_VALUE -> {
                    if (c.doubleValue() != 0.0 && c.doubleValue() != 1.0) {
                        problems.add(file, pos[0], pos[1], literalMessage(Template.formatNumber(c.doubleValue(), -1)));
                        ok = false;
                    }
                }
                case UINT64_VALUE -> {
                    problems.add(
                            file, pos[0], pos[1], literalMessage(c.uint64Value().toString()));
                    ok = false;
                }
                case STRING_VALUE -> {
                    if (!RuleVariables.STRING_CONSTANTS.contains(c.stringValue())) {
                        problems.add(
                                file,
                                pos[0],
                                pos[1],
                                "'" + c.stringValue() + "' is not a value the engine binds"
                                        + RuleReader.suggestion(c.stringValue(), RuleVariables.STRING_CONSTANTS)
                                        + "; support modes are INVASIVE_VENTILATION, NON_INVASIVE_VENTILATION,"
                                        + " HIGH_FLOW_NASAL_OXYGEN, CONVENTIONAL_OXYGEN, ROOM_AIR");
                        ok = false;
                    }
                }
                default -> {}
            }
        }
        return ok;
    }

    private static String literalMessage(String literal) {
        return "the number " + literal + " is a threshold written into the expression; declare it under parameters"
                + " (with unit, source and description) and write params.<name> instead";
    }

    private void recordReferences(YamlNode node, CelAbstractSyntaxTree ast) {
        for (Map.Entry<Long, dev.cel.common.ast.CelReference> r :
                ast.getReferenceMap().entrySet()) {
            String name = r.getValue().name();
            if (name.isEmpty() || !r.getValue().overloadIds().isEmpty()) {
                continue;
            }
            noteReference(name, position(node, ast, r.getKey()));
        }
    }

    private void noteReference(String name, int[] pos) {
        referenced.add(name);
        RuleVariables.Variable v = RuleVariables.standard().get(name);
        String availability = null;
        if (v != null && v.availability().isPresent()) {
            availability = v.availability().get();
        } else if (aggregateNames.contains(name)) {
            availability = name + "_available";
        }
        if (availability != null) {
            valueReads.putIfAbsent(name, pos);
        }
        if (name.endsWith("_available") || name.equals("age_known")) {
            String base = name.equals("age_known") ? "age_years" : name.substring(0, name.length() - 10);
            if (name.equals("support_flow_available")) {
                base = "support_flow";
            }
            guarded.add(base);
        }
    }

    /** Reports value variables read without their availability ever being checked in this rule. */
    void checkGuards() {
        for (Map.Entry<String, int[]> read : valueReads.entrySet()) {
            String name = read.getKey();
            if (guarded.contains(name)) {
                continue;
            }
            String availability = name.equals("age_years")
                    ? "age_known"
                    : name.equals("support_flow") ? "support_flow_available" : name + "_available";
            problems.add(
                    file,
                    read.getValue()[0],
                    read.getValue()[1],
                    name + " is read without checking " + availability + "; an unavailable value is NaN, so guard it ("
                            + availability + " && ...) or list it under requires");
        }
    }

    /** The standard (engine-bound) variables referenced so far, for the engine's binding. */
    Set<String> referencedStandardVariables() {
        Set<String> out = new TreeSet<>();
        for (String r : referenced) {
            if (RuleVariables.standard().containsKey(r)) {
                out.add(r);
            }
        }
        return out;
    }

    /** Checks that a template placeholder names something the engine can render for this rule. */
    String placeholderProblem(Template.Placeholder ph) {
        String v = ph.variable();
        switch (v) {
            case "tier" -> {
                return ph.attribute().equals("value") || ph.attribute().equals("code")
                        ? null
                        : "{tier." + ph.attribute() + "} is not available; use {tier} or {tier.code}";
            }
            case "anchor", "episode.start" -> {
                return ph.attribute().equals("time") || v.equals("anchor") ? null : "use {" + v + "}";
            }
            default -> {}
        }
        if (!declared.containsKey(v)) {
            if (v.startsWith("params.")) {
                String name = v.substring("params.".length());
                ParameterDefinition p = params.get(name);
                if (p != null && p.type() == ParameterType.DURATION) {
                    referenced.add(v);
                    return null;
                }
                return "the parameter '" + name + "' is not declared under parameters"
                        + RuleReader.suggestion(name, params.keySet());
            }
            return "unknown variable '" + v + "' in the text" + RuleReader.suggestion(v, declared.keySet());
        }
        referenced.add(v);
        RuleVariables.Variable sv = RuleVariables.standard().get(v);
        boolean measurement = sv != null && sv.origin() == RuleVariables.Origin.MEASUREMENT_VALUE;
        if ((ph.attribute().equals("time") || ph.attribute().equals("role")) && !measurement) {
            return "{" + v + "." + ph.attribute() + "} is only available for measurements such as pao2 or fio2";
        }
        if (ph.attribute().equals("code")) {
            return "{" + v + ".code} is not available; .code applies to {tier.code}";
        }
        return null;
    }

    /** Folds the not-evaluable cases and tiers into one short-circuiting program returning an int. */
    RuleExpression decisionProgram(List<String> notEvaluable, List<String> tierConditions) {
        StringBuilder sb = new StringBuilder();
        int open = 0;
        for (int i = 0; i < notEvaluable.size(); i++) {
            sb.append("((")
                    .append(notEvaluable.get(i))
                    .append("\n) ? -")
                    .append(i + 1)
                    .append(" : ");
            open++;
        }
        for (int r = tierConditions.size() - 1; r >= 0; r--) {
            sb.append("((")
                    .append(tierConditions.get(r))
                    .append("\n) ? ")
                    .append(r + 1)
                    .append(" : ");
            open++;
        }
        sb.append("0");
        sb.append(")".repeat(open));
        CelValidationResult result = compiler.compile(sb.toString());
        if (result.hasError()) {
            throw new IllegalStateException("the folded decision failed to compile: " + result.getErrorString());
        }
        try {
            return RuleExpression.of(result.getAst(), RUNTIME.createProgram(result.getAst()));
        } catch (Exception e) {
            throw new IllegalStateException("the folded decision could not be planned", e);
        }
    }

    // --- positions and messages ----------------------------------------------------------------------------

    private int[] position(YamlNode node, CelAbstractSyntaxTree ast, long exprId) {
        Integer offset = ast.getSource().getPositionsMap().get(exprId);
        if (offset == null) {
            return new int[] {node.line(), node.column()};
        }
        CelSourceLocation loc = ast.getSource().getOffsetLocation(offset).orElse(null);
        if (loc == null) {
            return new int[] {node.line(), node.column()};
        }
        return node.positionOf(loc.getLine(), loc.getColumn());
    }

    private void report(YamlNode node, String text, List<CelIssue> issues, String prefix) {
        for (CelIssue issue : issues) {
            CelSourceLocation loc = issue.getSourceLocation();
            int[] pos = loc.getLine() > 0
                    ? node.positionOf(loc.getLine(), loc.getColumn())
                    : new int[] {node.line(), node.column()};
            problems.add(file, pos[0], pos[1], prefix + explain(issue.getMessage(), text, loc));
        }
    }

    private String explain(String message, String text, CelSourceLocation loc) {
        String m = message.replaceAll(" \\(candidates: .*\\)$", "").replace(" (in container '')", "");
        if (m.startsWith("undeclared reference to 'params'")) {
            String rest = textAt(text, loc);
            String name = rest.startsWith("params.") ? rest.substring(7).split("[^a-z0-9_A-Z]", 2)[0] : "";
            return "the parameter '" + name + "' is not declared under parameters"
                    + RuleReader.suggestion(name, params.keySet()) + "; declared: "
                    + String.join(", ", params.keySet());
        }
        if (m.startsWith("undeclared reference to '")) {
            String name = m.substring("undeclared reference to '".length(), m.lastIndexOf('\''));
            List<String> all = new ArrayList<>(declared.keySet());
            return "unknown variable '" + name + "'" + RuleReader.suggestion(name, all)
                    + "; the engine binds index values (pf_ratio), measurements (peep, fio2, spo2_percent), patient"
                    + " and support values, params.<name>, and this rule's aggregates and derived values";
        }
        if (m.startsWith("found no matching overload")) {
            return "type error: " + m + "; compare numbers with numbers and texts with texts";
        }
        return m;
    }

    private static String textAt(String text, CelSourceLocation loc) {
        String[] lines = text.split("\n", -1);
        if (loc.getLine() < 1 || loc.getLine() > lines.length) {
            return "";
        }
        String line = lines[loc.getLine() - 1];
        return loc.getColumn() < line.length() ? line.substring(loc.getColumn()) : "";
    }
}
