package org.lungflag.sandbox.player;

import java.net.URI;
import java.time.Duration;
import java.util.Objects;

/**
 * How to play the demo scenario.
 *
 * @param fhirBaseUrl the FHIR server's base URL, e.g. {@code http://127.0.0.1:8090/fhir}
 * @param speed clinical seconds per wall-clock second ({@link #DEFAULT_SPEED}: 72 h in 3 min); {@code 0} plays at
 *     full speed (as fast as the server accepts, for tests)
 * @param hours how many clinical hours of the scenario to play, from its start (at most the scenario's 72 h)
 * @param progressEvery a progress line after every this much clinical time
 */
public record PlayOptions(URI fhirBaseUrl, double speed, double hours, Duration progressEvery) {

    /** 72 h of clinical time in 3 minutes of wall-clock time. */
    public static final double DEFAULT_SPEED = 72 * 3600.0 / 180.0;

    public static final double FULL_SPEED = 0;

    public PlayOptions {
        Objects.requireNonNull(fhirBaseUrl, "fhirBaseUrl");
        if (!"http".equals(fhirBaseUrl.getScheme()) && !"https".equals(fhirBaseUrl.getScheme())) {
            throw new IllegalArgumentException("the FHIR base URL must be http or https, was " + fhirBaseUrl);
        }
        if (speed < 0 || Double.isNaN(speed) || Double.isInfinite(speed)) {
            throw new IllegalArgumentException("speed must be 0 (full speed) or positive, was " + speed);
        }
        if (!(hours > 0 && hours <= 72)) {
            throw new IllegalArgumentException("hours must be more than 0 and at most 72, was " + hours);
        }
        Objects.requireNonNull(progressEvery, "progressEvery");
        String text = fhirBaseUrl.toString();
        if (text.endsWith("/")) {
            fhirBaseUrl = URI.create(text.substring(0, text.length() - 1));
        }
    }

    /** The whole scenario at the default speed, a progress line every 4 clinical hours. */
    public static PlayOptions defaults(URI fhirBaseUrl) {
        return new PlayOptions(fhirBaseUrl, DEFAULT_SPEED, 72, Duration.ofHours(4));
    }

    public PlayOptions withSpeed(double newSpeed) {
        return new PlayOptions(fhirBaseUrl, newSpeed, hours, progressEvery);
    }

    public PlayOptions withHours(double newHours) {
        return new PlayOptions(fhirBaseUrl, speed, newHours, progressEvery);
    }

    public PlayOptions withProgressEvery(Duration every) {
        return new PlayOptions(fhirBaseUrl, speed, hours, every);
    }

    public boolean fullSpeed() {
        return speed == FULL_SPEED;
    }
}
