package org.lungflag.rules.engine;

/** The state of an advisory episode. */
public enum EpisodeStatus {
    ACTIVE,
    RESOLVED,
    EXPIRED
}
