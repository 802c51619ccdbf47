package org.lungflag.rules.catalog;

import java.time.Duration;
import java.util.Collections;
import java.util.LinkedHashMap;
import java.util.Map;
import java.util.Optional;
import java.util.TreeMap;

/**
 * Site values for rule parameters, keyed {@code <rule-id>.<parameter>} (e.g. {@code hypoxemia.resolve_after}),
 * validated against a catalog: an unknown rule or parameter, or a value of the wrong type, is refused with a message
 * naming the key. Replay's {@code --params FILE} and {@code --sweep RULE.PARAM=V1,V2} and the service configuration
 * build on this. Immutable.
 */
public final class ParameterOverrides {

    private static final ParameterOverrides NONE = new ParameterOverrides(Map.of());

    private final Map<String, Object> values; // key → typed value

    private ParameterOverrides(Map<String, Object> values) {
        this.values = values;
    }

    public static ParameterOverrides none() {
        return NONE;
    }

    /**
     * Validates and types overrides. Values may be strings (as in a properties file or the command line: "250",
     * "true", "6h") or already typed ({@link Number}, {@link Boolean}, {@link Duration}).
     *
     * @throws ParameterOverrideException naming the first bad key
     */
    public static ParameterOverrides from(RuleCatalog catalog, Map<String, ?> overrides) {
        Map<String, Object> typed = new TreeMap<>();
        for (Map.Entry<String, ?> e : overrides.entrySet()) {
            String key = e.getKey().strip();
            ParameterDefinition p = resolve(catalog, key);
            typed.put(key, typed(key, p, e.getValue()));
        }
        return new ParameterOverrides(Collections.unmodifiableMap(typed));
    }

    /** A copy with one more (or a replaced) override, validated the same way; used by sweeps. */
    public ParameterOverrides with(RuleCatalog catalog, String key, Object value) {
        Map<String, Object> copy = new TreeMap<>(values);
        copy.put(key.strip(), typed(key, resolve(catalog, key.strip()), value));
        return new ParameterOverrides(Collections.unmodifiableMap(copy));
    }

    /** The overrides as given (typed), keyed {@code rule.param}. */
    public Map<String, Object> asMap() {
        return values;
    }

    public boolean isEmpty() {
        return values.isEmpty();
    }

    public Optional<Object> override(String ruleId, String parameter) {
        return Optional.ofNullable(values.get(ruleId + "." + parameter));
    }

    /** The value in effect for a parameter: the override, else the default. */
    public Object value(RuleDefinition rule, ParameterDefinition parameter) {
        return override(rule.id(), parameter.name()).orElse(parameter.defaultValue());
    }

    /** Every parameter of a rule with the value in effect, in declaration order. */
    public Map<String, Object> effective(RuleDefinition rule) {
        Map<String, Object> out = new LinkedHashMap<>();
        for (ParameterDefinition p : rule.parameters()) {
            out.put(p.name(), value(rule, p));
        }
        return Collections.unmodifiableMap(out);
    }

    private static ParameterDefinition resolve(RuleCatalog catalog, String key) {
        int dot = key.indexOf('.');
        if (dot <= 0 || dot == key.length() - 1) {
            throw new ParameterOverrideException(
                    key, "a parameter override is written <rule-id>.<parameter>, e.g." + " hypoxemia.resolve_after");
        }
        String ruleId = key.substring(0, dot);
        String name = key.substring(dot + 1);
        RuleDefinition rule = catalog.rule(ruleId)
                .orElseThrow(() -> new ParameterOverrideException(
                        key,
                        "no rule '" + ruleId + "' in the catalog"
                                + RuleReader.suggestion(
                                        ruleId,
                                        catalog.rules().stream()
                                                .map(RuleDefinition::id)
                                                .toList())));
        return rule.parameter(name)
                .orElseThrow(() -> new ParameterOverrideException(
                        key,
                        "rule '" + ruleId + "' has no parameter '" + name + "'"
                                + RuleReader.suggestion(
                                        name,
                                        rule.parameters().stream()
                                                .map(ParameterDefinition::name)
                                                .toList())
                                + "; its parameters are "
                                + String.join(
                                        ", ",
                                        rule.parameters().stream()
                                                .map(ParameterDefinition::name)
                                                .toList())));
    }

    private static Object typed(String key, ParameterDefinition p, Object value) {
        if (value == null) {
            throw new ParameterOverrideException(key, "no value given");
        }
        try {
            if (value instanceof String s) {
                return convert(s.strip(), p.type());
            }
            return switch (p.type()) {
                case NUMBER -> {
                    if (value instanceof Number n) {
                        yield finite(n.doubleValue());
                    }
                    throw new IllegalArgumentException("expected a number, got " + value);
                }
                case INTEGER -> {
                    if (value instanceof Integer || value instanceof Long) {
                        yield ((Number) value).longValue();
                    }
                    throw new IllegalArgumentException("expected a whole number, got " + value);
                }
                case BOOLEAN -> {
                    if (value instanceof Boolean b) {
                        yield b;
                    }
                    throw new IllegalArgumentException("expected true or false, got " + value);
                }
                case DURATION -> {
                    if (value instanceof Duration d) {
                        yield d;
                    }
                    throw new IllegalArgumentException("expected a duration such as 6h, got " + value);
                }
            };
        } catch (IllegalArgumentException e) {
            throw new ParameterOverrideException(
                    key, e.getMessage() + " (parameter type " + p.type().yamlName() + ", unit '" + p.unit() + "')");
        }
    }

    private static double finite(double d) {
        if (!Double.isFinite(d)) {
            throw new IllegalArgumentException("a number must be finite");
        }
        return d;
    }

    /** Converts a text value to a parameter type. */
    static Object convert(String text, ParameterType type) {
        switch (type) {
            case NUMBER -> {
                try {
                    return finite(Double.parseDouble(text));
                } catch (NumberFormatException e) {
                    throw new IllegalArgumentException("'" + text + "' is not a number");
                }
            }
            case INTEGER -> {
                try {
                    return Long.parseLong(text);
                } catch (NumberFormatException e) {
                    throw new IllegalArgumentException("'" + text + "' is not a whole number");
                }
            }
            case BOOLEAN -> {
                if (text.equals("true")) {
                    return Boolean.TRUE;
                }
                if (text.equals("false")) {
                    return Boolean.FALSE;
                }
                throw new IllegalArgumentException("'" + text + "' is not true or false");
            }
            case DURATION -> {
                Duration d = RuleReader.parseDuration(text);
                if (d.isZero()) {
                    throw new IllegalArgumentException("a duration must be longer than zero");
                }
                return d;
            }
            default -> throw new IllegalStateException();
        }
    }

    @Override
    public String toString() {
        return values.toString();
    }
}
