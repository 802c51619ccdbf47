package org.lungflag.service.replay;

import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;

/**
 * The replay command's arguments (design.md contract): {@code replay --input PATH --out DIR [--catalog DIR]
 * [--params FILE] [--sweep RULE.PARAM=V1,V2,...]}.
 *
 * @param sweepKey {@code rule-id.parameter}, or {@code null} without {@code --sweep}
 * @param sweepValues the values as written, in the order given
 */
record ReplayOptions(Path input, Path out, Path catalog, Path params, String sweepKey, List<String> sweepValues) {

    static final String USAGE =
            "usage: replay --input PATH --out DIR [--catalog DIR] [--params FILE]" + " [--sweep RULE.PARAM=V1,V2,...]";

    /** Parses the arguments after {@code replay}; a problem is a {@link BadArgument} with a one-line message. */
    static ReplayOptions parse(List<String> args) {
        Path input = null;
        Path out = null;
        Path catalog = null;
        Path params = null;
        String sweepKey = null;
        List<String> sweepValues = List.of();
        for (int i = 0; i < args.size(); i++) {
            String a = args.get(i);
            String name = a;
            String value = null;
            int eq = a.indexOf('=');
            if (a.startsWith("--") && eq > 0) {
                name = a.substring(0, eq);
                value = a.substring(eq + 1);
            }
            if (!List.of("--input", "--out", "--catalog", "--params", "--sweep").contains(name)) {
                throw new BadArgument("unknown argument '" + a + "'; " + USAGE);
            }
            if (value == null) {
                if (i + 1 >= args.size() || args.get(i + 1).startsWith("--")) {
                    throw new BadArgument(name + " needs a value; " + USAGE);
                }
                value = args.get(++i);
            }
            if (value.isBlank()) {
                throw new BadArgument(name + " needs a value; " + USAGE);
            }
            switch (name) {
                case "--input" -> input = once(name, input, Path.of(value));
                case "--out" -> out = once(name, out, Path.of(value));
                case "--catalog" -> catalog = once(name, catalog, Path.of(value));
                case "--params" -> params = once(name, params, Path.of(value));
                default -> {
                    if (sweepKey != null) {
                        throw new BadArgument("--sweep is given twice; one parameter is swept per run");
                    }
                    int at = value.indexOf('=');
                    if (at <= 0
                            || at == value.length() - 1
                            || value.substring(0, at).indexOf('.') <= 0) {
                        throw new BadArgument("--sweep '" + value + "' is not RULE.PARAM=V1,V2,...,"
                                + " e.g. --sweep hypoxemia.pf_mild_max=250,300,350");
                    }
                    sweepKey = value.substring(0, at).strip();
                    List<String> values = new ArrayList<>();
                    for (String v : value.substring(at + 1).split(",", -1)) {
                        if (v.isBlank()) {
                            throw new BadArgument("--sweep '" + value + "' has an empty value in its list");
                        }
                        if (values.contains(v.strip())) {
                            throw new BadArgument("--sweep '" + value + "' lists " + v.strip() + " twice");
                        }
                        values.add(v.strip());
                    }
                    sweepValues = List.copyOf(values);
                }
            }
        }
        if (input == null) {
            throw new BadArgument("--input PATH is required; " + USAGE);
        }
        if (out == null) {
            throw new BadArgument("--out DIR is required; " + USAGE);
        }
        return new ReplayOptions(input, out, catalog, params, sweepKey, sweepValues);
    }

    private static Path once(String name, Path previous, Path value) {
        if (previous != null) {
            throw new BadArgument(name + " is given twice");
        }
        return value;
    }

    /** A bad argument or unreadable input: the command prints the message on one line and exits with 2. */
    static final class BadArgument extends RuntimeException {
        BadArgument(String message) {
            super(message);
        }
    }
}
