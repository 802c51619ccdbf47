package org.lungflag.sandbox.player;

import java.time.Duration;
import java.time.Instant;

/**
 * What a play did.
 *
 * @param shift how far every time of the scenario was moved (scenario time + shift = time on the server)
 * @param clinicalStart where hour 0 of the scenario lies on the server
 * @param clinicalEnd the last clinical time played ("now" when the play ended)
 * @param resourcesPosted Patients, Encounters, Specimens and Observations written
 * @param observationsPosted of which Observations
 * @param flags Flags on the server when the play ended
 * @param activeFlags of which active
 * @param wallTime how long the play took
 */
public record PlayResult(
        Duration shift,
        Instant clinicalStart,
        Instant clinicalEnd,
        int resourcesPosted,
        int observationsPosted,
        long flags,
        long activeFlags,
        Duration wallTime) {}
