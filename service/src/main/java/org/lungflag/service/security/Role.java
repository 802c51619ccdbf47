package org.lungflag.service.security;

/**
 * The two roles. An {@link #ADMIN} can do everything an {@link #AUDITOR} can (a role hierarchy), and also switch a
 * rule between silent and active.
 */
public enum Role {
    /** Reads everything in the console and the audit API. */
    AUDITOR,
    /** Also switches rules between silent and active, and reads the metrics endpoint. */
    ADMIN;

    /** The Spring Security authority, e.g. {@code ROLE_ADMIN}. */
    public String authority() {
        return "ROLE_" + name();
    }
}
