package org.lungflag.rules.timeline;

import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.Collections;
import java.util.Comparator;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.Objects;
import java.util.Optional;
import org.lungflag.rules.measure.ClinicalFact;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.PositionState;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.measure.SupportState;
import org.lungflag.rules.measure.ValueRole;

/**
 * One patient's normalized facts in clinical-time order, bounded to a window (default 48 h) behind the latest
 * clinical time seen. Facts are keyed by the resource they came from, so a redelivered resource changes nothing,
 * a newer version of a resource replaces the older one, and an entered-in-error resource can be retracted.
 *
 * <p>Order never depends on arrival: facts are sorted by clinical time, then source reference, then kind. Facts
 * that stay in force (support, position, height, weight) are kept when they are the latest of their kind before
 * the window start, whenever they arrive.
 *
 * <p>Storage is compact (measurements column-wise in primitive arrays, resource ids as numbers where they are
 * numeric or UUIDs) so that a 48 h window of hourly ventilator readings fits the per-patient memory target; the
 * {@link Measurement}s handed out are rebuilt on demand and equal the ones added. See DEVELOPERS.md "Benchmarks".
 *
 * <p>Not thread-safe; the service serializes work per patient.
 */
public final class PatientTimeline {

    /** The default window (design.md: bounded window, default 48 h). */
    public static final Duration DEFAULT_WINDOW = Duration.ofHours(48);

    static final Comparator<ClinicalFact> CLINICAL_ORDER = Comparator.comparing(ClinicalFact::time)
            .thenComparing(ClinicalFact::source)
            .thenComparing(ClinicalFact::kind);

    private static final QuantityKind[] KINDS = QuantityKind.values();
    private static final String[] NO_UNITS = new String[0];

    private final String patientId;
    private final Duration window;
    private final MeasurementSeries[] series = new MeasurementSeries[KINDS.length];
    /** Categorical facts (support, position): few, kept as objects in clinical order. */
    @SuppressWarnings("unchecked")
    private final List<ClinicalFact>[] states = new List[KINDS.length];

    private final ResourceTable resources = new ResourceTable();
    private String[] unitTable = NO_UNITS;
    private Instant latest;

    public PatientTimeline(String patientId, Duration window) {
        this.patientId = Objects.requireNonNull(patientId, "patientId");
        if (window.isNegative() || window.isZero()) {
            throw new IllegalArgumentException("the timeline window must be positive");
        }
        this.window = window;
    }

    public PatientTimeline(String patientId) {
        this(patientId, DEFAULT_WINDOW);
    }

    public String patientId() {
        return patientId;
    }

    public Duration window() {
        return window;
    }

    /**
     * Offers all facts normalized from one resource version. Facts from one resource are replaced together when a
     * newer version arrives.
     */
    public AddResult addResource(SourceRef source, List<? extends ClinicalFact> facts) {
        Objects.requireNonNull(source, "source");
        for (ClinicalFact fact : facts) {
            SourceRef s = fact.source();
            if (!s.resourceType().equals(source.resourceType()) || !s.id().equals(source.id())) {
                throw new IllegalArgumentException("fact from " + s + " offered as part of " + source);
            }
        }
        int slot = resources.find(source.resourceType(), source.id());
        boolean existed = slot >= 0;
        if (existed && compareVersions(source.version(), resources.version(slot)) <= 0) {
            return AddResult.DUPLICATE;
        }
        if (!existed && facts.isEmpty()) {
            return AddResult.DUPLICATE;
        }
        if (existed) {
            removeFactsOf(slot);
            resources.setVersion(slot, source.version());
        } else {
            slot = resources.insert(source.resourceType(), source.id(), source.version());
        }
        Instant start = windowStart();
        for (ClinicalFact fact : facts) {
            // facts that stay in force may lie before the window: pruning keeps the latest of each kind
            if (start != null && fact.time().isBefore(start) && !fact.kind().staysInForce()) {
                continue;
            }
            insert(fact, slot);
            if (latest == null || fact.time().isAfter(latest)) {
                latest = fact.time();
            }
        }
        prune(); // may forget this very resource when all its facts were superseded before the window
        if (existed) {
            return AddResult.REPLACED;
        }
        int kept = resources.find(source.resourceType(), source.id());
        if (kept < 0) {
            return AddResult.OUTSIDE_WINDOW;
        }
        if (resources.liveFacts(kept) == 0) {
            resources.remove(kept);
            return AddResult.OUTSIDE_WINDOW;
        }
        return AddResult.ADDED;
    }

    /** Convenience for a resource that yields a single fact. */
    public AddResult add(ClinicalFact fact) {
        return addResource(fact.source(), List.of(fact));
    }

    /**
     * Removes every fact of a resource (e.g. it was marked entered-in-error). Returns the clinical times that were
     * removed, so the caller can re-evaluate from the earliest.
     */
    public List<Instant> retract(String resourceType, String id) {
        int slot = resources.find(resourceType, id);
        if (slot < 0) {
            return List.of();
        }
        List<Instant> times = removeFactsOf(slot);
        resources.remove(slot);
        Collections.sort(times);
        return List.copyOf(times);
    }

    /**
     * The clinical times of the facts a resource currently contributes (empty when it is not on the timeline), so a
     * caller can re-evaluate from the earliest time a replacement or retraction touches.
     */
    public List<Instant> timesOf(String resourceType, String id) {
        int slot = resources.find(resourceType, id);
        if (slot < 0) {
            return List.of();
        }
        List<Instant> times = new ArrayList<>(2);
        for (int k = 0; k < KINDS.length; k++) {
            MeasurementSeries s = series[k];
            if (s != null) {
                for (int i = 0; i < s.size(); i++) {
                    if (s.slot(i) == slot) {
                        times.add(Instant.ofEpochSecond(s.seconds(i), s.nanos(i)));
                    }
                }
            }
            List<ClinicalFact> list = states[k];
            if (list != null) {
                for (ClinicalFact f : list) {
                    if (resources.matches(
                            slot, f.source().resourceType(), f.source().id())) {
                        times.add(f.time());
                    }
                }
            }
        }
        Collections.sort(times);
        return times;
    }

    /** Whether a fact of the kind lies at exactly this clinical time (allocation-free, for the engine). */
    public boolean hasFactAt(QuantityKind kind, Instant at) {
        if (kind.isCategorical()) {
            List<ClinicalFact> list = states[kind.ordinal()];
            if (list != null) {
                for (ClinicalFact f : list) {
                    if (f.time().equals(at)) {
                        return true;
                    }
                }
            }
            return false;
        }
        MeasurementSeries s = series[kind.ordinal()];
        if (s == null) {
            return false;
        }
        int i = s.indexAfter(at.getEpochSecond(), at.getNano()) - 1;
        return i >= 0 && s.compareTime(i, at.getEpochSecond(), at.getNano()) == 0;
    }

    /** Adds the clinical times of the kind's facts strictly after {@code after} (all when null) to {@code into}. */
    public void timesAfter(QuantityKind kind, Instant after, java.util.Collection<Instant> into) {
        if (kind.isCategorical()) {
            List<ClinicalFact> list = states[kind.ordinal()];
            if (list != null) {
                for (ClinicalFact f : list) {
                    if (after == null || f.time().isAfter(after)) {
                        into.add(f.time());
                    }
                }
            }
            return;
        }
        MeasurementSeries s = series[kind.ordinal()];
        if (s == null) {
            return;
        }
        int from = after == null ? 0 : s.indexAfter(after.getEpochSecond(), after.getNano());
        for (int i = from; i < s.size(); i++) {
            into.add(Instant.ofEpochSecond(s.seconds(i), s.nanos(i)));
        }
    }

    /** The measurements of a kind with clinical time in {@code [from, to]}, in clinical order. */
    public List<Measurement> measurementsBetween(QuantityKind kind, Instant from, Instant to) {
        MeasurementSeries s = kind.isCategorical() ? null : series[kind.ordinal()];
        if (s == null) {
            return List.of();
        }
        int end = s.indexAfter(to.getEpochSecond(), to.getNano());
        int start = end;
        while (start > 0 && s.compareTime(start - 1, from.getEpochSecond(), from.getNano()) >= 0) {
            start--;
        }
        List<Measurement> out = new ArrayList<>(end - start);
        for (int i = start; i < end; i++) {
            out.add(s.get(i, resources, unitTable));
        }
        return out;
    }

    /** Whether this exact resource version (or a newer one) is already on the timeline. */
    public boolean contains(SourceRef source) {
        int slot = resources.find(source.resourceType(), source.id());
        return slot >= 0 && compareVersions(source.version(), resources.version(slot)) <= 0;
    }

    /** The latest clinical time on the timeline, if any. */
    public Optional<Instant> latestTime() {
        return Optional.ofNullable(latest);
    }

    /** The earliest clinical time still inside the window, or {@code null} when empty. */
    public Instant windowStart() {
        return latest == null ? null : latest.minus(window);
    }

    /** All facts of a kind, in clinical order (an unmodifiable snapshot). */
    public List<ClinicalFact> facts(QuantityKind kind) {
        if (kind.isCategorical()) {
            List<ClinicalFact> list = states[kind.ordinal()];
            return list == null ? List.of() : List.copyOf(list);
        }
        return List.copyOf(measurements(kind));
    }

    /** All measurements of a kind, in clinical order. */
    public List<Measurement> measurements(QuantityKind kind) {
        MeasurementSeries s = series[kind.ordinal()];
        if (s == null) {
            return new ArrayList<>(0);
        }
        List<Measurement> out = new ArrayList<>(s.size());
        for (int i = 0; i < s.size(); i++) {
            out.add(s.get(i, resources, unitTable));
        }
        return out;
    }

    /** Every fact, in clinical order. */
    public List<ClinicalFact> allFacts() {
        List<ClinicalFact> all = new ArrayList<>(size());
        for (QuantityKind kind : KINDS) {
            if (kind.isCategorical()) {
                List<ClinicalFact> list = states[kind.ordinal()];
                if (list != null) {
                    all.addAll(list);
                }
            } else {
                all.addAll(measurements(kind));
            }
        }
        all.sort(CLINICAL_ORDER);
        return all;
    }

    /** Number of facts held. */
    public int size() {
        int n = 0;
        for (int k = 0; k < KINDS.length; k++) {
            if (series[k] != null) {
                n += series[k].size();
            }
            if (states[k] != null) {
                n += states[k].size();
            }
        }
        return n;
    }

    /**
     * The latest measurement of a kind (and role, when not {@code null}) at or before {@code at}, no older than
     * {@code lookBack}. Never a value recorded after {@code at}.
     */
    public Optional<Measurement> latestAtOrBefore(QuantityKind kind, ValueRole role, Instant at, Duration lookBack) {
        MeasurementSeries s = series[kind.ordinal()];
        if (s == null) {
            return Optional.empty();
        }
        long earliestSeconds = Long.MIN_VALUE;
        int earliestNanos = 0;
        if (lookBack != null) {
            Instant earliest = at.minus(lookBack);
            earliestSeconds = earliest.getEpochSecond();
            earliestNanos = earliest.getNano();
        }
        boolean wantMeasurement = role == ValueRole.MEASUREMENT;
        for (int i = s.indexAfter(at.getEpochSecond(), at.getNano()) - 1; i >= 0; i--) {
            if (lookBack != null && s.compareTime(i, earliestSeconds, earliestNanos) < 0) {
                break;
            }
            if (role == null || s.isMeasurement(i) == wantMeasurement) {
                return Optional.of(s.get(i, resources, unitTable));
            }
        }
        return Optional.empty();
    }

    /**
     * {@link #latestAtOrBefore} for both roles in one search: {@code out[0]} gets the latest setting (within {@code
     * settingLookBack}), {@code out[1]} the latest measurement (within {@code measurementLookBack}); {@code null}
     * where there is none. A {@code null} look-back means no limit.
     */
    public void latestSettingAndMeasurement(
            QuantityKind kind, Instant at, Duration settingLookBack, Duration measurementLookBack, Measurement[] out) {
        out[0] = null;
        out[1] = null;
        MeasurementSeries s = series[kind.ordinal()];
        if (s == null) {
            return;
        }
        boolean settingOpen = true;
        boolean measurementOpen = true;
        long settingSeconds = Long.MIN_VALUE;
        int settingNanos = 0;
        if (settingLookBack != null) {
            Instant earliest = at.minus(settingLookBack);
            settingSeconds = earliest.getEpochSecond();
            settingNanos = earliest.getNano();
        }
        long measurementSeconds = Long.MIN_VALUE;
        int measurementNanos = 0;
        if (measurementLookBack != null) {
            Instant earliest = at.minus(measurementLookBack);
            measurementSeconds = earliest.getEpochSecond();
            measurementNanos = earliest.getNano();
        }
        for (int i = s.indexAfter(at.getEpochSecond(), at.getNano()) - 1;
                i >= 0 && (settingOpen || measurementOpen);
                i--) {
            if (settingOpen && settingLookBack != null && s.compareTime(i, settingSeconds, settingNanos) < 0) {
                settingOpen = false;
            }
            if (measurementOpen
                    && measurementLookBack != null
                    && s.compareTime(i, measurementSeconds, measurementNanos) < 0) {
                measurementOpen = false;
            }
            if (s.isMeasurement(i)) {
                if (measurementOpen) {
                    out[1] = s.get(i, resources, unitTable);
                    measurementOpen = false;
                }
            } else if (settingOpen) {
                out[0] = s.get(i, resources, unitTable);
                settingOpen = false;
            }
        }
    }

    /** The respiratory support in force at {@code at}: the latest state change at or before it. */
    public Optional<SupportState> supportAt(Instant at) {
        return latestState(QuantityKind.RESPIRATORY_SUPPORT, at, SupportState.class);
    }

    /** The body position at {@code at}: the latest position change at or before it. */
    public Optional<PositionState> positionAt(Instant at) {
        return latestState(QuantityKind.BODY_POSITION, at, PositionState.class);
    }

    private <T extends ClinicalFact> Optional<T> latestState(QuantityKind kind, Instant at, Class<T> type) {
        List<ClinicalFact> list = states[kind.ordinal()];
        if (list == null) {
            return Optional.empty();
        }
        int lo = 0;
        int hi = list.size();
        while (lo < hi) {
            int mid = (lo + hi) >>> 1;
            if (list.get(mid).time().isAfter(at)) {
                hi = mid;
            } else {
                lo = mid + 1;
            }
        }
        return lo > 0 ? Optional.of(type.cast(list.get(lo - 1))) : Optional.empty();
    }

    private void insert(ClinicalFact fact, int slot) {
        int k = fact.kind().ordinal();
        if (fact instanceof Measurement m) {
            MeasurementSeries s = series[k];
            if (s == null) {
                s = new MeasurementSeries(m.kind());
                series[k] = s;
            }
            s.insert(insertionPoint(s, m), m, slot, unitIndex(m));
        } else {
            List<ClinicalFact> list = states[k];
            if (list == null) {
                list = new ArrayList<>(2);
                states[k] = list;
            }
            int pos = Collections.binarySearch(list, fact, CLINICAL_ORDER);
            list.add(pos >= 0 ? pos : -pos - 1, fact);
        }
        resources.addLive(slot, 1);
    }

    /** Where a measurement goes in clinical order: after every earlier time, ties broken by source reference. */
    private int insertionPoint(MeasurementSeries s, Measurement m) {
        long sec = m.time().getEpochSecond();
        int nano = m.time().getNano();
        int pos = s.indexAtOrAfter(sec, nano);
        int end = s.indexAfter(sec, nano);
        SourceRef source = m.source();
        while (pos < end && resources.ref(s.slot(pos)).compareTo(source) <= 0) {
            pos++; // same clinical time: rare, so the references are built only here
        }
        return pos;
    }

    private short unitIndex(Measurement m) {
        if (m.original() == null || m.original().unit() == null) {
            return -1;
        }
        String unit = m.original().unit();
        for (int i = 0; i < unitTable.length; i++) {
            if (unitTable[i].equals(unit)) {
                return (short) i;
            }
        }
        if (unitTable.length == Short.MAX_VALUE) {
            throw new IllegalStateException("too many distinct units on one timeline");
        }
        unitTable = Arrays.copyOf(unitTable, unitTable.length + 1);
        unitTable[unitTable.length - 1] = unit;
        return (short) (unitTable.length - 1);
    }

    /** Removes every fact of a slot from the series and state lists; returns their clinical times. */
    private List<Instant> removeFactsOf(int slot) {
        List<Instant> times = new ArrayList<>(2);
        for (int k = 0; k < KINDS.length; k++) {
            MeasurementSeries s = series[k];
            if (s != null) {
                for (int i = s.size() - 1; i >= 0; i--) {
                    if (s.slot(i) == slot) {
                        times.add(Instant.ofEpochSecond(s.seconds(i), s.nanos(i)));
                        s.removeAt(i);
                        resources.addLive(slot, -1);
                    }
                }
            }
            List<ClinicalFact> list = states[k];
            if (list != null) {
                for (int i = list.size() - 1; i >= 0; i--) {
                    SourceRef ref = list.get(i).source();
                    if (resources.matches(slot, ref.resourceType(), ref.id())) {
                        times.add(list.remove(i).time());
                        resources.addLive(slot, -1);
                    }
                }
            }
        }
        return times;
    }

    /**
     * Drops facts before the window. For kinds that stay in force (support, position, height, weight) the latest
     * fact before the window is kept. A resource is forgotten when none of its facts is left, so that a redelivery
     * of it is then refused as before the window.
     */
    private void prune() {
        Instant start = windowStart();
        if (start == null) {
            return;
        }
        long sec = start.getEpochSecond();
        int nano = start.getNano();
        for (int k = 0; k < KINDS.length; k++) {
            boolean keepOne = KINDS[k].staysInForce();
            MeasurementSeries s = series[k];
            if (s != null) {
                int cut = s.indexAtOrAfter(sec, nano);
                if (keepOne && cut > 0) {
                    cut--;
                }
                for (int i = 0; i < cut; i++) {
                    release(s.slot(i));
                }
                s.removeFirst(cut);
            }
            List<ClinicalFact> list = states[k];
            if (list != null) {
                int cut = 0;
                while (cut < list.size() && list.get(cut).time().isBefore(start)) {
                    cut++;
                }
                if (keepOne && cut > 0) {
                    cut--;
                }
                for (int i = 0; i < cut; i++) {
                    SourceRef ref = list.get(i).source();
                    int slot = resources.find(ref.resourceType(), ref.id());
                    if (slot >= 0) {
                        release(slot);
                    }
                }
                list.subList(0, cut).clear();
            }
        }
    }

    /** Consistency of the resource table with the facts held; for tests. */
    void checkConsistency() {
        Map<Integer, Integer> live = new HashMap<>();
        for (int k = 0; k < KINDS.length; k++) {
            if (series[k] != null) {
                for (int i = 0; i < series[k].size(); i++) {
                    live.merge(series[k].slot(i), 1, Integer::sum);
                }
            }
            if (states[k] != null) {
                for (ClinicalFact f : states[k]) {
                    int slot =
                            resources.find(f.source().resourceType(), f.source().id());
                    if (slot < 0) {
                        throw new IllegalStateException("state fact without resource: " + f.source());
                    }
                    live.merge(slot, 1, Integer::sum);
                }
            }
        }
        for (Map.Entry<Integer, Integer> e : live.entrySet()) {
            int slot = e.getKey();
            if (resources.find(resources.type(slot), resources.id(slot)) != slot) {
                throw new IllegalStateException("fact refers to a forgotten resource slot " + slot);
            }
            if (resources.liveFacts(slot) != e.getValue()) {
                throw new IllegalStateException(
                        "slot " + slot + " counts " + resources.liveFacts(slot) + " facts, holds " + e.getValue());
            }
        }
        if (resources.size() < live.size() || resources.chained() != resources.size()) {
            throw new IllegalStateException("resource table size " + resources.size() + ", chained "
                    + resources.chained() + ", with facts " + live.size());
        }
    }

    private void release(int slot) {
        resources.addLive(slot, -1);
        if (resources.liveFacts(slot) == 0) {
            resources.remove(slot);
        }
    }

    /**
     * Compares FHIR version ids: numerically when both are integers (HAPI's form), else as text. An unknown
     * version sorts before every known one.
     */
    static int compareVersions(String a, String b) {
        if (Objects.equals(a, b)) {
            return 0;
        }
        if (a == null) {
            return -1;
        }
        if (b == null) {
            return 1;
        }
        try {
            return Long.compare(Long.parseLong(a), Long.parseLong(b));
        } catch (NumberFormatException e) {
            return a.compareTo(b);
        }
    }
}
