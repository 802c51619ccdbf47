package org.lungflag.sandbox.cli;

/** Wrong command-line arguments; the message names the argument and what was wrong with it. */
final class UsageException extends RuntimeException {

    private static final long serialVersionUID = 1L;

    UsageException(String message) {
        super(message);
    }
}
