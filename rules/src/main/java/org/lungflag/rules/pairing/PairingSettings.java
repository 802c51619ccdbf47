package org.lungflag.rules.pairing;

import java.time.Duration;
import java.util.Objects;

/**
 * How far back from an anchor time a value may be and still count as "in force" (clinical-reference §10.3).
 *
 * @param settingLookBack for device settings, FiO2 and PEEP included (default 60 min)
 * @param measurementLookBack for measured values (default 30 min)
 */
public record PairingSettings(Duration settingLookBack, Duration measurementLookBack) {

    public static final Duration DEFAULT_SETTING_LOOK_BACK = Duration.ofMinutes(60);
    public static final Duration DEFAULT_MEASUREMENT_LOOK_BACK = Duration.ofMinutes(30);

    public PairingSettings {
        Objects.requireNonNull(settingLookBack, "settingLookBack");
        Objects.requireNonNull(measurementLookBack, "measurementLookBack");
        if (settingLookBack.isNegative() || measurementLookBack.isNegative()) {
            throw new IllegalArgumentException("look-back durations cannot be negative");
        }
    }

    public static PairingSettings defaults() {
        return new PairingSettings(DEFAULT_SETTING_LOOK_BACK, DEFAULT_MEASUREMENT_LOOK_BACK);
    }
}
