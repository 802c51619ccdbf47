package org.lungflag.rules.catalog;

import dev.cel.common.CelAbstractSyntaxTree;
import dev.cel.common.ast.CelConstant;
import dev.cel.common.ast.CelExpr;
import dev.cel.common.ast.CelReference;
import dev.cel.runtime.CelEvaluationException;
import dev.cel.runtime.CelRuntime;
import dev.cel.runtime.CelVariableResolver;
import java.util.List;
import java.util.Optional;

/**
 * One checked CEL expression of a rule, ready to evaluate against a variable resolver.
 *
 * <p>The rule conditions use a small part of CEL: constants, variables, {@code && || !}, comparisons, the
 * conditional operator and arithmetic. For an expression made only of those, a direct tree evaluator computes the
 * result without CEL's general interpreter (which costs about as much as all the rest of an evaluation). It follows
 * the CEL language definition for those operators, and whenever it meets anything it is not sure to reproduce (an
 * unbound variable, a value of an unexpected type, an integer overflow or division by zero, a mixed comparison of a
 * very large integer) it gives up and the CEL runtime evaluates the whole expression, so the answer, errors
 * included, is always CEL's. An expression using anything else is always evaluated by the CEL runtime.
 * {@code RuleExpressionTest} compares the two on every expression of the catalog with random variable values.
 */
public final class RuleExpression {

    /** A resolver that can hand out a variable's value without wrapping it (null when unbound). */
    public interface DirectValues {
        Object valueOrNull(String name);
    }

    private final CelRuntime.Program cel;
    private final Node direct;

    private RuleExpression(CelRuntime.Program cel, Node direct) {
        this.cel = cel;
        this.direct = direct;
    }

    static RuleExpression of(CelAbstractSyntaxTree ast, CelRuntime.Program cel) {
        return new RuleExpression(cel, build(ast, ast.getExpr()));
    }

    /** Evaluates the expression; the result and any error are CEL's. */
    public Object eval(CelVariableResolver resolver) throws CelEvaluationException {
        if (direct != null) {
            try {
                return direct.eval(resolver);
            } catch (NotDirect e) {
                // fall through: CEL decides
            }
        }
        return cel.eval(resolver);
    }

    /** Whether the expression is evaluated without CEL's interpreter when it can be. */
    boolean isDirect() {
        return direct != null;
    }

    /** The direct evaluator's answer, or empty when it defers to CEL (for the comparison test). */
    Optional<Object> evalDirectOnly(CelVariableResolver resolver) {
        if (direct == null) {
            return Optional.empty();
        }
        try {
            return Optional.of(direct.eval(resolver));
        } catch (NotDirect e) {
            return Optional.empty();
        }
    }

    /** CEL's own answer (for the comparison test). */
    Object evalCelOnly(CelVariableResolver resolver) throws CelEvaluationException {
        return cel.eval(resolver);
    }

    // --- the direct evaluator ------------------------------------------------------------------------------

    /** Thrown inside the direct evaluator when CEL must decide; cheap (no stack trace). */
    private static final class NotDirect extends RuntimeException {
        private static final NotDirect INSTANCE = new NotDirect();

        private NotDirect() {
            super(null, null, false, false);
        }
    }

    private interface Node {
        Object eval(CelVariableResolver r);
    }

    /** Builds the node tree, or returns null when any part of the expression is outside the supported set. */
    private static Node build(CelAbstractSyntaxTree ast, CelExpr e) {
        switch (e.getKind()) {
            case CONSTANT -> {
                return constant(e.constant());
            }
            case IDENT -> {
                Optional<CelReference> ref = ast.getReference(e.id());
                if (ref.flatMap(CelReference::value).isPresent()) {
                    return null; // an enum or other constant reference
                }
                return variable(ref.map(CelReference::name).orElse(e.ident().name()));
            }
            case SELECT -> {
                // params.x is declared as one variable; the checker resolves the selection to its name
                Optional<CelReference> ref = ast.getReference(e.id());
                if (ref.isEmpty() || ref.get().value().isPresent() || e.select().testOnly()) {
                    return null;
                }
                return variable(ref.get().name());
            }
            case CALL -> {
                if (e.call().target().isPresent()) {
                    return null;
                }
                List<CelExpr> args = e.call().args();
                Node[] a = new Node[args.size()];
                for (int i = 0; i < a.length; i++) {
                    a[i] = build(ast, args.get(i));
                    if (a[i] == null) {
                        return null;
                    }
                }
                return call(e.call().function(), a);
            }
            default -> {
                return null;
            }
        }
    }

    private static Node constant(CelConstant c) {
        Object v = switch (c.getKind()) {
            case BOOLEAN_VALUE -> c.booleanValue();
            case INT64_VALUE -> c.int64Value();
            case DOUBLE_VALUE -> c.doubleValue();
            case STRING_VALUE -> c.stringValue();
            default -> null;
        };
        if (v == null) {
            return null;
        }
        return r -> v;
    }

    private static Node variable(String name) {
        return r -> {
            Object v;
            if (r instanceof DirectValues d) {
                v = d.valueOrNull(name);
            } else {
                v = r.find(name).orElse(null);
            }
            if (v instanceof Double || v instanceof Long || v instanceof Boolean || v instanceof String) {
                return v;
            }
            throw NotDirect.INSTANCE; // unbound, or a type CEL might see differently
        };
    }

    private static Node call(String function, Node[] a) {
        return switch (function) {
            case "_&&_" -> a.length == 2 ? and(a[0], a[1]) : null;
            case "_||_" -> a.length == 2 ? or(a[0], a[1]) : null;
            case "!_" -> a.length == 1 ? r -> !bool(a[0].eval(r)) : null;
            case "_?_:_" -> a.length == 3 ? r -> bool(a[0].eval(r)) ? a[1].eval(r) : a[2].eval(r) : null;
            case "_==_" -> a.length == 2 ? r -> equal(a[0].eval(r), a[1].eval(r)) : null;
            case "_!=_" -> a.length == 2 ? r -> !equal(a[0].eval(r), a[1].eval(r)) : null;
            case "_<_" -> a.length == 2 ? r -> compare(a[0].eval(r), a[1].eval(r), Order.LT) : null;
            case "_<=_" -> a.length == 2 ? r -> compare(a[0].eval(r), a[1].eval(r), Order.LE) : null;
            case "_>_" -> a.length == 2 ? r -> compare(a[0].eval(r), a[1].eval(r), Order.GT) : null;
            case "_>=_" -> a.length == 2 ? r -> compare(a[0].eval(r), a[1].eval(r), Order.GE) : null;
            case "_+_" -> a.length == 2 ? r -> arithmetic('+', a[0].eval(r), a[1].eval(r)) : null;
            case "_-_" -> a.length == 2 ? r -> arithmetic('-', a[0].eval(r), a[1].eval(r)) : null;
            case "_*_" -> a.length == 2 ? r -> arithmetic('*', a[0].eval(r), a[1].eval(r)) : null;
            case "_/_" -> a.length == 2 ? r -> arithmetic('/', a[0].eval(r), a[1].eval(r)) : null;
            case "-_" -> a.length == 1 ? r -> negate(a[0].eval(r)) : null;
            default -> null;
        };
    }

    private static Node and(Node left, Node right) {
        // CEL's && is false when either side is false, even if the other fails; a failure here defers to CEL
        return r -> bool(left.eval(r)) && bool(right.eval(r));
    }

    private static Node or(Node left, Node right) {
        return r -> bool(left.eval(r)) || bool(right.eval(r));
    }

    private static boolean bool(Object v) {
        if (v instanceof Boolean b) {
            return b;
        }
        throw NotDirect.INSTANCE;
    }

    /** Below 2^53 a long converts to a double exactly, so a mixed comparison is exact. */
    private static final long EXACT = 1L << 53;

    private static double exactDouble(long v) {
        if (v > EXACT || v < -EXACT) {
            throw NotDirect.INSTANCE;
        }
        return v;
    }

    private static boolean equal(Object x, Object y) {
        if (x instanceof Double a && y instanceof Double b) {
            return a.doubleValue() == b.doubleValue(); // NaN is unequal to itself, -0.0 equals 0.0
        }
        if (x instanceof Long a && y instanceof Long b) {
            return a.longValue() == b.longValue();
        }
        if (x instanceof Long a && y instanceof Double b) {
            return exactDouble(a) == b;
        }
        if (x instanceof Double a && y instanceof Long b) {
            return a == exactDouble(b);
        }
        if (x instanceof String a && y instanceof String b) {
            return a.equals(b);
        }
        if (x instanceof Boolean a && y instanceof Boolean b) {
            return a.booleanValue() == b.booleanValue();
        }
        throw NotDirect.INSTANCE;
    }

    private enum Order {
        LT,
        LE,
        GT,
        GE
    }

    private static boolean compare(Object x, Object y, Order o) {
        if (x instanceof Long a && y instanceof Long b) {
            long p = a;
            long q = b;
            return switch (o) {
                case LT -> p < q;
                case LE -> p <= q;
                case GT -> p > q;
                case GE -> p >= q;
            };
        }
        double p;
        double q;
        if (x instanceof Double a) {
            p = a;
        } else if (x instanceof Long a) {
            p = exactDouble(a);
        } else {
            throw NotDirect.INSTANCE; // strings, booleans: CEL decides
        }
        if (y instanceof Double b) {
            q = b;
        } else if (y instanceof Long b) {
            q = exactDouble(b);
        } else {
            throw NotDirect.INSTANCE;
        }
        // IEEE comparisons: any comparison with NaN is false, as in CEL
        return switch (o) {
            case LT -> p < q;
            case LE -> p <= q;
            case GT -> p > q;
            case GE -> p >= q;
        };
    }

    private static Object arithmetic(char op, Object x, Object y) {
        if (x instanceof Double a && y instanceof Double b) {
            double p = a;
            double q = b;
            return switch (op) {
                case '+' -> p + q;
                case '-' -> p - q;
                case '*' -> p * q;
                default -> p / q; // IEEE: division by zero gives an infinity or NaN, as in CEL
            };
        }
        if (x instanceof Long a && y instanceof Long b) {
            long p = a;
            long q = b;
            try {
                return switch (op) {
                    case '+' -> Math.addExact(p, q);
                    case '-' -> Math.subtractExact(p, q);
                    case '*' -> Math.multiplyExact(p, q);
                    default -> {
                        if (q == 0 || (p == Long.MIN_VALUE && q == -1)) {
                            throw NotDirect.INSTANCE; // CEL's error
                        }
                        yield p / q;
                    }
                };
            } catch (ArithmeticException overflow) {
                throw NotDirect.INSTANCE;
            }
        }
        throw NotDirect.INSTANCE; // strings, lists, mixed types: CEL decides
    }

    private static Object negate(Object x) {
        if (x instanceof Double a) {
            return -a;
        }
        if (x instanceof Long a && a != Long.MIN_VALUE) {
            return -a;
        }
        throw NotDirect.INSTANCE;
    }
}
