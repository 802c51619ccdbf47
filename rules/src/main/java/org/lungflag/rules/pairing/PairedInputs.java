package org.lungflag.rules.pairing;

import java.time.Instant;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.EnumMap;
import java.util.LinkedHashSet;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import java.util.Set;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.PositionState;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SupportState;

/**
 * What was in force at one anchor time: for each kind, the latest setting and the latest measurement within
 * their look-backs, the respiratory support and body position, and the body measures on record. It says what it
 * used and what was missing.
 */
public final class PairedInputs {

    private static final int KIND_COUNT = QuantityKind.values().length;

    private final Instant anchor;
    private final Map<QuantityKind, Measurement> settings;
    private final Map<QuantityKind, Measurement> measured;
    private final SupportState support;
    private final PositionState position;
    private final List<MissingInput> missing;
    /** {@link #missing} by kind ordinal, for {@link #missingOrNull}. */
    private final MissingInput[] missingByKind;

    PairedInputs(
            Instant anchor,
            Map<QuantityKind, Measurement> settings,
            Map<QuantityKind, Measurement> measured,
            SupportState support,
            PositionState position,
            List<MissingInput> missing) {
        this(anchor, copy(settings), copy(measured), support, position, missing, true);
    }

    private static EnumMap<QuantityKind, Measurement> copy(Map<QuantityKind, Measurement> values) {
        EnumMap<QuantityKind, Measurement> out = new EnumMap<>(QuantityKind.class);
        out.putAll(values);
        return out;
    }

    /** For {@link Pairing}: takes the maps as they are (the pairing made them and lets go of them). */
    private PairedInputs(
            Instant anchor,
            EnumMap<QuantityKind, Measurement> settings,
            EnumMap<QuantityKind, Measurement> measured,
            SupportState support,
            PositionState position,
            List<MissingInput> missing,
            boolean owned) {
        this.anchor = anchor;
        this.settings = settings.isEmpty() ? Map.of() : settings;
        this.measured = measured.isEmpty() ? Map.of() : measured;
        this.support = support;
        this.position = position;
        this.missing = List.copyOf(missing);
        this.missingByKind = byKind(this.missing);
    }

    static PairedInputs owning(
            Instant anchor,
            Map<QuantityKind, Measurement> settings,
            Map<QuantityKind, Measurement> measured,
            SupportState support,
            PositionState position,
            List<MissingInput> missing) {
        return new PairedInputs(
                anchor,
                (EnumMap<QuantityKind, Measurement>) settings,
                (EnumMap<QuantityKind, Measurement>) measured,
                support,
                position,
                missing,
                true);
    }

    private static MissingInput[] byKind(List<MissingInput> missing) {
        MissingInput[] out = new MissingInput[KIND_COUNT];
        for (MissingInput m : missing) {
            if (out[m.kind().ordinal()] == null) {
                out[m.kind().ordinal()] = m; // the first, as a scan of the list finds it
            }
        }
        return out;
    }

    /** The anchor (blood gas collection time, or the reading that triggered the evaluation). */
    public Instant anchor() {
        return anchor;
    }

    /** The latest setting of a kind within the setting look-back. */
    public Optional<Measurement> setting(QuantityKind kind) {
        return Optional.ofNullable(settings.get(kind));
    }

    /** The latest measurement of a kind within the measurement look-back. */
    public Optional<Measurement> measured(QuantityKind kind) {
        return Optional.ofNullable(measured.get(kind));
    }

    /** The more recent of {@link #setting} and {@link #measured}; on a tie, the measurement. */
    public Optional<Measurement> latest(QuantityKind kind) {
        return Optional.ofNullable(latestOrNull(kind));
    }

    /**
     * Allocation-free form of {@link #latest} for hot paths: the more recent of the setting and the measurement
     * of a kind (on a tie, the measurement), or {@code null} when neither is in force.
     */
    public Measurement latestOrNull(QuantityKind kind) {
        Measurement s = settings.get(kind);
        Measurement m = measured.get(kind);
        if (s == null) {
            return m;
        }
        if (m == null) {
            return s;
        }
        return s.time().isAfter(m.time()) ? s : m;
    }

    /** Allocation-free form of {@link #setting}: the setting in force, or {@code null}. */
    public Measurement settingOrNull(QuantityKind kind) {
        return settings.get(kind);
    }

    /** Allocation-free form of {@link #measured}: the measurement in force, or {@code null}. */
    public Measurement measuredOrNull(QuantityKind kind) {
        return measured.get(kind);
    }

    /** What the pairing says about a kind it did not find, or {@code null} when the kind was found. */
    public MissingInput missingOrNull(QuantityKind kind) {
        return missingByKind[kind.ordinal()];
    }

    public Optional<SupportState> support() {
        return Optional.ofNullable(support);
    }

    public Optional<PositionState> position() {
        return Optional.ofNullable(position);
    }

    /** Kinds that were looked for and not found. */
    public List<MissingInput> missing() {
        return missing;
    }

    public boolean isMissing(QuantityKind kind) {
        return missingOrNull(kind) != null;
    }

    /** Every measurement the pairing found, in clinical order. */
    public List<Measurement> all() {
        Set<Measurement> all = new LinkedHashSet<>(settings.values());
        all.addAll(measured.values());
        List<Measurement> out = new ArrayList<>(all);
        out.sort(Comparator.comparing(Measurement::time).thenComparing(Measurement::source));
        return out;
    }
}
