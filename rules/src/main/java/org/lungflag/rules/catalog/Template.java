package org.lungflag.rules.catalog;

import java.util.ArrayList;
import java.util.List;

/**
 * An advisory, basis or detail text with placeholders: {@code {name}} (a value, up to 2 decimals), {@code
 * {name|N}} (N decimals), {@code {name.time}} (clinical time of a measurement), {@code {name.role}} ("set" or
 * "measured"). Special names: {@code tier} (the tier's display), {@code tier.code}, {@code anchor} (the evaluation
 * time), {@code episode.start}, and {@code params.<name>}.
 */
public final class Template {

    /**
     * One placeholder.
     *
     * @param variable the variable name (e.g. {@code pao2}, {@code params.pf_mild_max}, {@code tier})
     * @param attribute {@code value}, {@code time}, {@code role} or {@code code}
     * @param decimals fixed decimals, or -1 for "up to 2"
     * @param offset character offset of the placeholder's opening brace in the text
     */
    public record Placeholder(String variable, String attribute, int decimals, int offset) {}

    /** Supplies the text of one placeholder; returns {@code null} when its value is not available. */
    public interface Resolver {
        String resolve(Placeholder placeholder);
    }

    private final String text;
    private final List<Object> parts; // String literals and Placeholders

    private Template(String text, List<Object> parts) {
        this.text = text;
        this.parts = parts;
    }

    public String text() {
        return text;
    }

    public List<Placeholder> placeholders() {
        List<Placeholder> out = new ArrayList<>();
        for (Object p : parts) {
            if (p instanceof Placeholder ph) {
                out.add(ph);
            }
        }
        return out;
    }

    /** Renders the text, or returns {@code null} when any placeholder is not available. */
    public String render(Resolver resolver) {
        StringBuilder sb = new StringBuilder(text.length() + 16);
        for (Object p : parts) {
            if (p instanceof Placeholder ph) {
                String v = resolver.resolve(ph);
                if (v == null) {
                    return null;
                }
                sb.append(v);
            } else {
                sb.append((String) p);
            }
        }
        return sb.toString();
    }

    /** Formats a number as the templates do: fixed decimals, or up to 2 decimals without trailing zeros. */
    public static String formatNumber(double value, int decimals) {
        if (!Double.isFinite(value)) {
            return String.valueOf(value);
        }
        int d = decimals >= 0 ? decimals : 2;
        double scaled = value * POWERS[Math.min(d, POWERS.length - 1)];
        double fraction = Math.abs(scaled - Math.floor(scaled));
        String s;
        if (d >= POWERS.length || Math.abs(scaled) > 1e15 || Math.abs(fraction - 0.5) < 1e-6) {
            // near a tie (or huge): let BigDecimal round the decimal value half-up exactly
            java.math.BigDecimal b = java.math.BigDecimal.valueOf(value).setScale(d, java.math.RoundingMode.HALF_UP);
            s = b.toPlainString();
        } else {
            long r = Math.round(scaled);
            s = fixed(r, d);
        }
        if (decimals < 0 && s.indexOf('.') >= 0) {
            int end = s.length();
            while (s.charAt(end - 1) == '0') {
                end--;
            }
            if (s.charAt(end - 1) == '.') {
                end--;
            }
            s = s.substring(0, end);
        }
        return isNegativeZero(s) ? s.substring(1) : s;
    }

    /** Whether {@code s} is {@code -0} or {@code -0.} followed by zeros only (the regex {@code -0\\.0*}, unrolled). */
    private static boolean isNegativeZero(String s) {
        if (s.length() < 2 || s.charAt(0) != '-' || s.charAt(1) != '0') {
            return false;
        }
        if (s.length() == 2) {
            return true;
        }
        if (s.charAt(2) != '.') {
            return false;
        }
        for (int i = 3; i < s.length(); i++) {
            if (s.charAt(i) != '0') {
                return false;
            }
        }
        return true;
    }

    private static final double[] POWERS = {1, 10, 100, 1000, 10000, 100000, 1000000};

    private static String fixed(long scaled, int decimals) {
        boolean negative = scaled < 0;
        String digits = Long.toString(Math.abs(scaled));
        if (decimals == 0) {
            return negative ? "-" + digits : digits;
        }
        StringBuilder sb = new StringBuilder(digits.length() + 3);
        if (negative) {
            sb.append('-');
        }
        if (digits.length() <= decimals) {
            sb.append("0.");
            sb.append("0".repeat(decimals - digits.length()));
            sb.append(digits);
        } else {
            sb.append(digits, 0, digits.length() - decimals)
                    .append('.')
                    .append(digits, digits.length() - decimals, digits.length());
        }
        return sb.toString();
    }

    /**
     * Parses a template. Problems (an unclosed brace, a bad format) are reported as {@code [offset, message]}
     * pairs through {@code onProblem}; the result is then {@code null}.
     */
    static Template parse(String text, java.util.function.BiConsumer<Integer, String> onProblem) {
        List<Object> parts = new ArrayList<>();
        StringBuilder lit = new StringBuilder();
        int i = 0;
        boolean ok = true;
        while (i < text.length()) {
            char c = text.charAt(i);
            if (c == '}') {
                onProblem.accept(i, "a '}' without a matching '{'; placeholders look like {pf_ratio|0}");
                ok = false;
                i++;
                continue;
            }
            if (c != '{') {
                lit.append(c);
                i++;
                continue;
            }
            int end = text.indexOf('}', i);
            if (end < 0) {
                onProblem.accept(i, "the placeholder starting here is not closed with '}'");
                return null;
            }
            if (lit.length() > 0) {
                parts.add(lit.toString());
                lit.setLength(0);
            }
            String body = text.substring(i + 1, end).trim();
            int decimals = -1;
            int bar = body.indexOf('|');
            if (bar >= 0) {
                String fmt = body.substring(bar + 1).trim();
                body = body.substring(0, bar).trim();
                if (!fmt.matches("[0-9]")) {
                    onProblem.accept(
                            i, "the format '|" + fmt + "' is not a number of decimals 0 to 9, e.g. {pf_ratio|0}");
                    ok = false;
                } else {
                    decimals = Integer.parseInt(fmt);
                }
            }
            String variable = body;
            String attribute = "value";
            for (String attr : List.of(".time", ".role", ".code", ".start")) {
                if (body.endsWith(attr) && !body.startsWith("params.")) {
                    variable = body.substring(0, body.length() - attr.length());
                    attribute = attr.substring(1);
                }
            }
            if (variable.equals("episode") && attribute.equals("start")) {
                attribute = "time";
                variable = "episode.start";
            }
            if (variable.isEmpty()) {
                onProblem.accept(i, "an empty placeholder {}");
                ok = false;
            }
            parts.add(new Placeholder(variable, attribute, decimals, i));
            i = end + 1;
        }
        if (lit.length() > 0) {
            parts.add(lit.toString());
        }
        return ok ? new Template(text, List.copyOf(parts)) : null;
    }

    @Override
    public String toString() {
        return text;
    }
}
