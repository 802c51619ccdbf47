package org.lungflag.rules.catalog;

import java.util.List;
import java.util.Set;
import org.lungflag.rules.quality.DataQualityReason;

/**
 * A rule's checked, precompiled logic, for the engine. Built once at load; evaluating it needs only a variable
 * resolver.
 *
 * <p>The {@link #decision()} program folds the rule's {@code not_evaluable} cases and tiers into one CEL expression
 * that short-circuits in order and returns an int: {@code -k} when the k-th not-evaluable case holds (1-based),
 * {@code rank + 1} for the most severe tier that holds, or {@code 0} when none does.
 */
public final class RuleLogic {

    /** A named value computed from other variables, bound lazily as a variable itself. */
    public record Derived(String name, VariableType type, String expression, RuleExpression program) {}

    /** A reason the rule cannot be evaluated at an anchor. */
    public record NotEvaluableCase(String condition, DataQualityReason reason, Template detail) {}

    /** One piece of the basis text; rendered when its condition holds and all its placeholders are available. */
    public record BasisFragment(String condition, RuleExpression when, Template text) {}

    private final List<Derived> derived;
    private final RuleExpression decision;
    private final List<NotEvaluableCase> notEvaluable;
    private final List<String> requires;
    private final List<BasisFragment> basis;
    private final Template advisory;
    private final Set<String> referencedVariables;

    RuleLogic(
            List<Derived> derived,
            RuleExpression decision,
            List<NotEvaluableCase> notEvaluable,
            List<String> requires,
            List<BasisFragment> basis,
            Template advisory,
            Set<String> referencedVariables) {
        this.derived = List.copyOf(derived);
        this.decision = decision;
        this.notEvaluable = List.copyOf(notEvaluable);
        this.requires = List.copyOf(requires);
        this.basis = List.copyOf(basis);
        this.advisory = advisory;
        this.referencedVariables = Set.copyOf(referencedVariables);
    }

    public List<Derived> derived() {
        return derived;
    }

    public RuleExpression decision() {
        return decision;
    }

    public List<NotEvaluableCase> notEvaluable() {
        return notEvaluable;
    }

    /** Value variables that must be available; when one is not, the rule is not evaluable with its reason. */
    public List<String> requires() {
        return requires;
    }

    public List<BasisFragment> basis() {
        return basis;
    }

    public Template advisory() {
        return advisory;
    }

    /** Every engine-bound variable any expression or template of the rule refers to. */
    public Set<String> referencedVariables() {
        return referencedVariables;
    }
}
