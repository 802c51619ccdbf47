package org.lungflag.rules.units;

/** Small text helpers for details that name a unit without echoing arbitrary input into logs. */
final class Units {

    private static final int MAX_QUOTED = 40;

    private Units() {}

    /** The unit in quotes, printable ASCII only and at most 40 characters, so free text cannot leak through it. */
    static String quote(String unit) {
        if (unit == null) {
            return "(none)";
        }
        StringBuilder sb = new StringBuilder(Math.min(unit.length(), MAX_QUOTED) + 2).append('\'');
        int n = 0;
        for (int i = 0; i < unit.length() && n < MAX_QUOTED; i++, n++) {
            char c = unit.charAt(i);
            sb.append(c >= 0x20 && c < 0x7f && c != '\'' ? c : '?');
        }
        if (unit.length() > MAX_QUOTED) {
            sb.append('…');
        }
        return sb.append('\'').toString();
    }
}
