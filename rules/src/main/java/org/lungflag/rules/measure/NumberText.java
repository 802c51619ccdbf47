package org.lungflag.rules.measure;

import java.util.Locale;

/**
 * Numbers as they appear in audit details, notes and refusal messages: whole numbers without a decimal point, others
 * with up to four decimals and no trailing zeros, very small or very large ones in scientific notation; always with
 * a dot, whatever the default locale.
 */
public final class NumberText {

    private NumberText() {}

    public static String of(double v) {
        if (Double.isNaN(v) || Double.isInfinite(v)) {
            return Double.toString(v);
        }
        if (v == Math.rint(v) && Math.abs(v) < 1e15) {
            return Long.toString((long) v);
        }
        if (Math.abs(v) >= 1e15 || Math.abs(v) < 1e-4) {
            return String.format(Locale.ROOT, "%.4g", v);
        }
        String s = String.format(Locale.ROOT, "%.4f", v);
        int end = s.length();
        while (s.charAt(end - 1) == '0') {
            end--;
        }
        if (s.charAt(end - 1) == '.') {
            end--;
        }
        return s.substring(0, end);
    }
}
