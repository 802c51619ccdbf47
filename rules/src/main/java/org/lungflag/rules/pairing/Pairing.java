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
import org.lungflag.rules.timeline.PatientTimeline;

/**
 * Pairs a blood gas (or any anchor reading) with the values in force at its clinical time: for each kind, the
 * latest value at or before the anchor within the look-back of its role; never a value recorded after the
 * anchor (clinical-reference §10.3, trap 6). Height and weight have no look-back: the latest on record at or
 * before the anchor is used.
 */
public final class Pairing {

    private final PairingSettings settings;

    /** What a missing kind reports, the same for every anchor: made once instead of at every anchor. */
    private final MissingInput[] missingByKind;

    public Pairing(PairingSettings settings) {
        this.settings = Objects.requireNonNull(settings, "settings");
        Duration longestLookBack = settings.settingLookBack().compareTo(settings.measurementLookBack()) >= 0
                ? settings.settingLookBack()
                : settings.measurementLookBack();
        this.missingByKind = new MissingInput[KINDS.length];
        for (QuantityKind kind : KINDS) {
            missingByKind[kind.ordinal()] = new MissingInput(kind, kind.staysInForce() ? null : longestLookBack);
        }
    }

    public PairingSettings settings() {
        return settings;
    }

    private static final QuantityKind[] KINDS = QuantityKind.values();

    /** Pairs every numeric kind at {@code anchor}. */
    public PairedInputs at(PatientTimeline timeline, Instant anchor) {
        Map<QuantityKind, Measurement> set = new EnumMap<>(QuantityKind.class);
        Map<QuantityKind, Measurement> measured = new EnumMap<>(QuantityKind.class);
        List<MissingInput> missing = new ArrayList<>();
        Measurement[] found = new Measurement[2];
        for (QuantityKind kind : KINDS) {
            if (kind.isCategorical()) {
                continue;
            }
            Duration settingLookBack = kind.staysInForce() ? null : settings.settingLookBack();
            Duration measurementLookBack = kind.staysInForce() ? null : settings.measurementLookBack();
            // one search of the series for both roles, as two latestAtOrBefore calls would find them
            timeline.latestSettingAndMeasurement(kind, anchor, settingLookBack, measurementLookBack, found);
            if (found[0] != null) {
                set.put(kind, found[0]);
            }
            if (found[1] != null) {
                measured.put(kind, found[1]);
            }
            if (found[0] == null && found[1] == null) {
                missing.add(missingByKind[kind.ordinal()]);
            }
        }
        return PairedInputs.owning(
                anchor,
                set,
                measured,
                timeline.supportAt(anchor).orElse(null),
                timeline.positionAt(anchor).orElse(null),
                missing);
    }
}
