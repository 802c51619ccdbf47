package org.lungflag.service.intake;

/** How a resource reached the inbox. */
public enum InboxChannel {
    /** A rest-hook notification with the resource as payload. */
    REST_HOOK,
    /** The periodic {@code _lastUpdated} catch-up search. */
    CATCH_UP,
    /** The first-sight load of a patient's recent Observations. */
    HYDRATION,
    /** A notification that only named the resource; it was fetched from the server. */
    FETCHED,
    /** A message from the integration bus. */
    BUS
}
