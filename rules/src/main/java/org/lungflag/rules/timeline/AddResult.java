package org.lungflag.rules.timeline;

/** What happened when a resource's facts were offered to a timeline. */
public enum AddResult {
    /** New facts: the timeline changed. */
    ADDED,
    /** A newer version of a resource already on the timeline replaced the older facts. */
    REPLACED,
    /** The same resource version (or an older one) was already there: nothing changed (idempotent redelivery). */
    DUPLICATE,
    /** Every fact lies before the window; nothing changed. */
    OUTSIDE_WINDOW
}
