package org.lungflag.sandbox.player;

/** The FHIR server refused part of the scenario or could not be reached; the message says which and why. */
public final class PlayException extends RuntimeException {

    private static final long serialVersionUID = 1L;

    public PlayException(String message) {
        super(message);
    }
}
