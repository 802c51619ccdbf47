package org.lungflag.sandbox.cli;

import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import java.util.Set;

/**
 * The {@code --name value} (or {@code --name=value}) options given to one command. Every option takes a value; an
 * unknown, repeated or value-less option, or a bare word, is a {@link UsageException} naming it.
 */
final class CommandOptions {

    private final String command;
    private final Map<String, String> values;

    private CommandOptions(String command, Map<String, String> values) {
        this.command = command;
        this.values = values;
    }

    /**
     * @param known the option names without the leading {@code --}
     */
    static CommandOptions parse(String command, List<String> arguments, Set<String> known) {
        Map<String, String> values = new LinkedHashMap<>();
        for (int i = 0; i < arguments.size(); i++) {
            String argument = arguments.get(i);
            if (!argument.startsWith("--") || argument.length() == 2) {
                throw new UsageException(command + ": unexpected argument '" + argument + "'");
            }
            String name = argument.substring(2);
            String value = null;
            int equals = name.indexOf('=');
            if (equals >= 0) {
                value = name.substring(equals + 1);
                name = name.substring(0, equals);
            }
            if (!known.contains(name)) {
                throw new UsageException(command + ": unknown option '--" + name + "'");
            }
            if (value == null) {
                if (i + 1 >= arguments.size() || arguments.get(i + 1).startsWith("--")) {
                    throw new UsageException(command + ": option '--" + name + "' needs a value");
                }
                value = arguments.get(++i);
            }
            if (values.putIfAbsent(name, value) != null) {
                throw new UsageException(command + ": option '--" + name + "' is given twice");
            }
        }
        return new CommandOptions(command, values);
    }

    Optional<String> text(String name) {
        return Optional.ofNullable(values.get(name));
    }

    /** The whole number given for {@code name}, which must lie in {@code [min, max]}; {@code fallback} if absent. */
    int integer(String name, int min, int max, int fallback) {
        String text = values.get(name);
        if (text == null) {
            return fallback;
        }
        try {
            int value = Integer.parseInt(text.trim());
            if (value >= min && value <= max) {
                return value;
            }
        } catch (NumberFormatException e) {
            // reported below with the accepted range
        }
        throw new UsageException(command + ": option '--" + name + "' must be a whole number from " + min + " to " + max
                + ", was '" + text + "'");
    }

    /** The whole number given for {@code name} (any long); {@code fallback} if absent. */
    long longNumber(String name, long fallback) {
        String text = values.get(name);
        if (text == null) {
            return fallback;
        }
        try {
            return Long.parseLong(text.trim());
        } catch (NumberFormatException e) {
            throw new UsageException(command + ": option '--" + name + "' must be a whole number, was '" + text + "'");
        }
    }
}
