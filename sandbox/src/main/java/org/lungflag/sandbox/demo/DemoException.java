package org.lungflag.sandbox.demo;

/** The demo could not start or go on; the message says what and where to look. */
public final class DemoException extends RuntimeException {

    private static final long serialVersionUID = 1L;

    public DemoException(String message) {
        super(message);
    }
}
