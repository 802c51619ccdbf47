package org.lungflag.service.intake;

/** Minimal OperationOutcome bodies for refusals, written without a parser so they work before one is available. */
final class OperationOutcomes {

    private OperationOutcomes() {}

    static String json(String severity, String code, String diagnostics) {
        return "{\"resourceType\":\"OperationOutcome\",\"issue\":[{\"severity\":\"" + severity + "\",\"code\":\"" + code
                + "\",\"diagnostics\":\"" + escape(diagnostics) + "\"}]}";
    }

    static String escape(String s) {
        StringBuilder out = new StringBuilder(s.length() + 8);
        for (int i = 0; i < s.length(); i++) {
            char c = s.charAt(i);
            switch (c) {
                case '"' -> out.append("\\\"");
                case '\\' -> out.append("\\\\");
                case '\n' -> out.append("\\n");
                case '\r' -> out.append("\\r");
                case '\t' -> out.append("\\t");
                default -> {
                    if (c < 0x20) {
                        out.append(String.format("\\u%04x", (int) c));
                    } else {
                        out.append(c);
                    }
                }
            }
        }
        return out.toString();
    }
}
