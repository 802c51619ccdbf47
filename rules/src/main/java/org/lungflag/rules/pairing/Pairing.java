package org.lungflag.rules.pairing;

import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.EnumMap;
import java.util.List;
import java.util.Map;
import java.util.Objects;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.ValueRole;
import org.lungflag.rules.timeline.PatientTimeline;

/**
 * Pairs a blood gas (or any anchor reading) with the values in force at its clinical time: for each kind, the
 * latest value at or before the anchor within the look-back of its role; never a value recorded after the
 * anchor (clinical-reference §10.3, trap 6). Height and weight have no look-back: the latest on record at or
 * before the anchor is used.
 */
public final class Pairing {

    private final PairingSettings settings;

    public Pairing(PairingSettings settings) {
        this.settings = Objects.requireNonNull(settings, "settings");
    }

    public PairingSettings settings() {
        return settings;
    }

    /** Pairs every numeric kind at {@code anchor}. */
    public PairedInputs at(PatientTimeline timeline, Instant anchor) {
        Map<QuantityKind, Measurement> set = new EnumMap<>(QuantityKind.class);
        Map<QuantityKind, Measurement> measured = new EnumMap<>(QuantityKind.class);
        List<MissingInput> missing = new ArrayList<>();
        Duration longestLookBack = settings.settingLookBack().compareTo(settings.measurementLookBack()) >= 0
                ? settings.settingLookBack()
                : settings.measurementLookBack();
        for (QuantityKind kind : QuantityKind.values()) {
            if (kind.isCategorical()) {
                continue;
            }
            Duration settingLookBack = kind.staysInForce() ? null : settings.settingLookBack();
            Duration measurementLookBack = kind.staysInForce() ? null : settings.measurementLookBack();
            timeline.latestAtOrBefore(kind, ValueRole.SETTING, anchor, settingLookBack)
                    .ifPresent(m -> set.put(kind, m));
            timeline.latestAtOrBefore(kind, ValueRole.MEASUREMENT, anchor, measurementLookBack)
                    .ifPresent(m -> measured.put(kind, m));
            if (!set.containsKey(kind) && !measured.containsKey(kind)) {
                missing.add(new MissingInput(kind, kind.staysInForce() ? null : longestLookBack));
            }
        }
        return new PairedInputs(
                anchor,
                set,
                measured,
                timeline.supportAt(anchor).orElse(null),
                timeline.positionAt(anchor).orElse(null),
                missing);
    }
}
