package org.lungflag.rules.engine;

import java.time.ZoneId;
import java.util.Objects;
import org.lungflag.rules.pairing.PairingSettings;

/**
 * How the engine pairs and renders, and how the per-patient evaluator keeps checkpoints.
 *
 * @param pairing look-backs for values in force at an anchor (defaults: settings 60 min, measurements 30 min)
 * @param displayZone time zone used only to render times in texts ("at 03:10"); never for logic
 * @param checkpointEvery the evaluator keeps a checkpoint every this many evaluation points (a late fact re-runs
 *     from the checkpoint before it)
 */
public record EngineSettings(PairingSettings pairing, ZoneId displayZone, int checkpointEvery) {

    public EngineSettings {
        Objects.requireNonNull(pairing, "pairing");
        Objects.requireNonNull(displayZone, "displayZone");
        if (checkpointEvery < 1) {
            throw new IllegalArgumentException("checkpointEvery must be at least 1");
        }
    }

    public static EngineSettings defaults() {
        return new EngineSettings(PairingSettings.defaults(), ZoneId.of("UTC"), 16);
    }

    public EngineSettings withDisplayZone(ZoneId zone) {
        return new EngineSettings(pairing, zone, checkpointEvery);
    }
}
