package org.lungflag.rules.timeline;

import java.time.Instant;
import java.util.Arrays;
import java.util.List;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.OriginalQuantity;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.UnitRepair;
import org.lungflag.rules.measure.ValueRole;

/**
 * The measurements of one kind on one timeline, in clinical order, stored column-wise in primitive arrays (about
 * 35 bytes a fact instead of a few hundred for the objects). {@link Measurement}s are rebuilt on demand and are
 * equal to the ones that were added.
 */
final class MeasurementSeries {

    private static final SpecimenKind[] SPECIMENS = SpecimenKind.values();
    private static final int ROLE_MEASUREMENT = 1;
    private static final int NO_ORIGINAL = 1 << 4;

    final QuantityKind kind;
    private int size;
    private long[] seconds = new long[8];
    private int[] nanos = new int[8];
    private double[] values = new double[8];
    private double[] originals = new double[8];
    private int[] slots = new int[8];
    /** Bit 0 role (1 = measurement), bits 1–3 specimen ordinal, bit 4 no original quantity. */
    private byte[] flags = new byte[8];
    /** Index into the timeline's unit table, -1 for a null unit. */
    private short[] units = new short[8];
    /** Allocated when the first repaired value arrives; null entries mean none. */
    private List<UnitRepair>[] repairs;

    MeasurementSeries(QuantityKind kind) {
        this.kind = kind;
    }

    int size() {
        return size;
    }

    int slot(int i) {
        return slots[i];
    }

    long seconds(int i) {
        return seconds[i];
    }

    int nanos(int i) {
        return nanos[i];
    }

    boolean isMeasurement(int i) {
        return (flags[i] & ROLE_MEASUREMENT) != 0;
    }

    /** Compares entry {@code i}'s time with an instant. */
    int compareTime(int i, long otherSeconds, int otherNanos) {
        int c = Long.compare(seconds[i], otherSeconds);
        return c != 0 ? c : Integer.compare(nanos[i], otherNanos);
    }

    /** Index of the first entry strictly after the given time. */
    int indexAfter(long s, int n) {
        int lo = 0;
        int hi = size;
        while (lo < hi) {
            int mid = (lo + hi) >>> 1;
            if (compareTime(mid, s, n) > 0) {
                hi = mid;
            } else {
                lo = mid + 1;
            }
        }
        return lo;
    }

    /** Index of the first entry at or after the given time. */
    int indexAtOrAfter(long s, int n) {
        int lo = 0;
        int hi = size;
        while (lo < hi) {
            int mid = (lo + hi) >>> 1;
            if (compareTime(mid, s, n) >= 0) {
                hi = mid;
            } else {
                lo = mid + 1;
            }
        }
        return lo;
    }

    @SuppressWarnings("unchecked")
    void insert(int at, Measurement m, int slot, short unit) {
        if (size == seconds.length) {
            grow();
        }
        int tail = size - at;
        if (tail > 0) {
            System.arraycopy(seconds, at, seconds, at + 1, tail);
            System.arraycopy(nanos, at, nanos, at + 1, tail);
            System.arraycopy(values, at, values, at + 1, tail);
            System.arraycopy(originals, at, originals, at + 1, tail);
            System.arraycopy(slots, at, slots, at + 1, tail);
            System.arraycopy(flags, at, flags, at + 1, tail);
            System.arraycopy(units, at, units, at + 1, tail);
            if (repairs != null) {
                System.arraycopy(repairs, at, repairs, at + 1, tail);
            }
        }
        Instant t = m.time();
        seconds[at] = t.getEpochSecond();
        nanos[at] = t.getNano();
        values[at] = m.value();
        slots[at] = slot;
        int f = (m.role() == ValueRole.MEASUREMENT ? ROLE_MEASUREMENT : 0)
                | (m.specimen().ordinal() << 1);
        if (m.original() == null) {
            f |= NO_ORIGINAL;
        } else {
            originals[at] = m.original().value();
        }
        flags[at] = (byte) f;
        units[at] = unit;
        if (!m.repairs().isEmpty()) {
            if (repairs == null) {
                repairs = new List[seconds.length];
            }
            repairs[at] = m.repairs();
        } else if (repairs != null) {
            repairs[at] = null;
        }
        size++;
    }

    /** Removes entries [0, n). */
    void removeFirst(int n) {
        removeRange(0, n);
    }

    void removeAt(int i) {
        removeRange(i, i + 1);
    }

    private void removeRange(int from, int to) {
        int n = to - from;
        if (n <= 0) {
            return;
        }
        int tail = size - to;
        System.arraycopy(seconds, to, seconds, from, tail);
        System.arraycopy(nanos, to, nanos, from, tail);
        System.arraycopy(values, to, values, from, tail);
        System.arraycopy(originals, to, originals, from, tail);
        System.arraycopy(slots, to, slots, from, tail);
        System.arraycopy(flags, to, flags, from, tail);
        System.arraycopy(units, to, units, from, tail);
        if (repairs != null) {
            System.arraycopy(repairs, to, repairs, from, tail);
            Arrays.fill(repairs, size - n, size, null);
        }
        size -= n;
    }

    /** Rebuilds entry {@code i} as a Measurement. */
    Measurement get(int i, ResourceTable resources, String[] unitTable) {
        int f = flags[i];
        OriginalQuantity original = (f & NO_ORIGINAL) != 0
                ? null
                : new OriginalQuantity(originals[i], units[i] < 0 ? null : unitTable[units[i]]);
        List<UnitRepair> r = repairs == null || repairs[i] == null ? List.of() : repairs[i];
        return new Measurement(
                kind,
                values[i],
                Instant.ofEpochSecond(seconds[i], nanos[i]),
                (f & ROLE_MEASUREMENT) != 0 ? ValueRole.MEASUREMENT : ValueRole.SETTING,
                SPECIMENS[(f >> 1) & 0x7],
                resources.ref(slots[i]),
                original,
                r);
    }

    private void grow() {
        int n = seconds.length + (seconds.length >> 1) + 1;
        seconds = Arrays.copyOf(seconds, n);
        nanos = Arrays.copyOf(nanos, n);
        values = Arrays.copyOf(values, n);
        originals = Arrays.copyOf(originals, n);
        slots = Arrays.copyOf(slots, n);
        flags = Arrays.copyOf(flags, n);
        units = Arrays.copyOf(units, n);
        if (repairs != null) {
            repairs = Arrays.copyOf(repairs, n);
        }
    }
}
