package org.lungflag.sandbox.cli;

import java.io.PrintStream;
import java.util.List;

/** One sub-command of the sandbox executable. */
interface Command {

    /** The word that selects this command on the command line. */
    String name();

    /** One line for the list of commands. */
    String summary();

    /** The command's own usage: a synopsis line and one line per option. */
    String usage();

    /**
     * Runs the command with the arguments after its name.
     *
     * @return the process exit code
     * @throws UsageException when the arguments are wrong; the dispatcher prints the message and the usage, exit 2
     */
    int run(List<String> arguments, PrintStream out, PrintStream err);
}
