package org.lungflag.rules.timeline;

import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Collections;
import java.util.Comparator;
import java.util.EnumMap;
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
 * <p>Order never depends on arrival: facts are sorted by clinical time, then source reference, then kind.
 *
 * <p>Not thread-safe; the service serializes work per patient.
 */
public final class PatientTimeline {

    /** The default window (design.md: bounded window, default 48 h). */
    public static final Duration DEFAULT_WINDOW = Duration.ofHours(48);

    static final Comparator<ClinicalFact> CLINICAL_ORDER = Comparator.comparing(ClinicalFact::time)
            .thenComparing(ClinicalFact::source)
            .thenComparing(ClinicalFact::kind);

    private final String patientId;
    private final Duration window;
    private final Map<QuantityKind, List<ClinicalFact>> byKind = new EnumMap<>(QuantityKind.class);
    /** resourceType/id → version on the timeline and the kinds it contributed. */
    private final Map<String, ResourceEntry> byResource = new HashMap<>();

    private Instant latest;

    private record ResourceEntry(String version, List<ClinicalFact> facts) {}

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
        String key = source.unversioned();
        ResourceEntry existing = byResource.get(key);
        if (existing != null && compareVersions(source.version(), existing.version()) <= 0) {
            return AddResult.DUPLICATE;
        }
        Instant start = windowStart();
        List<ClinicalFact> kept = new ArrayList<>();
        for (ClinicalFact fact : facts) {
            if (!fact.source().unversioned().equals(key)) {
                throw new IllegalArgumentException("fact from " + fact.source() + " offered as part of " + source);
            }
            if (start == null || !fact.time().isBefore(start)) {
                kept.add(fact);
            }
        }
        if (existing != null) {
            remove(existing);
        }
        if (kept.isEmpty()) {
            if (existing != null) {
                byResource.put(key, new ResourceEntry(source.version(), List.of()));
                return AddResult.REPLACED;
            }
            return facts.isEmpty() ? AddResult.DUPLICATE : AddResult.OUTSIDE_WINDOW;
        }
        for (ClinicalFact fact : kept) {
            insertSorted(byKind.computeIfAbsent(fact.kind(), k -> new ArrayList<>()), fact);
            if (latest == null || fact.time().isAfter(latest)) {
                latest = fact.time();
            }
        }
        byResource.put(key, new ResourceEntry(source.version(), List.copyOf(kept)));
        prune();
        return existing == null ? AddResult.ADDED : AddResult.REPLACED;
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
        ResourceEntry existing = byResource.remove(resourceType + "/" + id);
        if (existing == null) {
            return List.of();
        }
        remove(existing);
        return existing.facts().stream().map(ClinicalFact::time).sorted().toList();
    }

    /**
     * The clinical times of the facts a resource currently contributes (empty when it is not on the timeline), so a
     * caller can re-evaluate from the earliest time a replacement or retraction touches.
     */
    public List<Instant> timesOf(String resourceType, String id) {
        ResourceEntry existing = byResource.get(resourceType + "/" + id);
        if (existing == null) {
            return List.of();
        }
        return existing.facts().stream().map(ClinicalFact::time).sorted().toList();
    }

    /** Whether this exact resource version (or a newer one) is already on the timeline. */
    public boolean contains(SourceRef source) {
        ResourceEntry existing = byResource.get(source.unversioned());
        return existing != null && compareVersions(source.version(), existing.version()) <= 0;
    }

    /** The latest clinical time on the timeline, if any. */
    public Optional<Instant> latestTime() {
        return Optional.ofNullable(latest);
    }

    /** The earliest clinical time still inside the window, or {@code null} when empty. */
    public Instant windowStart() {
        return latest == null ? null : latest.minus(window);
    }

    /** All facts of a kind, in clinical order (unmodifiable view). */
    public List<ClinicalFact> facts(QuantityKind kind) {
        return Collections.unmodifiableList(byKind.getOrDefault(kind, List.of()));
    }

    /** All measurements of a kind, in clinical order. */
    public List<Measurement> measurements(QuantityKind kind) {
        List<Measurement> out = new ArrayList<>();
        for (ClinicalFact fact : byKind.getOrDefault(kind, List.of())) {
            if (fact instanceof Measurement m) {
                out.add(m);
            }
        }
        return out;
    }

    /** Every fact, in clinical order. */
    public List<ClinicalFact> allFacts() {
        List<ClinicalFact> all = new ArrayList<>();
        byKind.values().forEach(all::addAll);
        all.sort(CLINICAL_ORDER);
        return all;
    }

    /** Number of facts held. */
    public int size() {
        int n = 0;
        for (List<ClinicalFact> list : byKind.values()) {
            n += list.size();
        }
        return n;
    }

    /**
     * The latest measurement of a kind (and role, when not {@code null}) at or before {@code at}, no older than
     * {@code lookBack}. Never a value recorded after {@code at}.
     */
    public Optional<Measurement> latestAtOrBefore(QuantityKind kind, ValueRole role, Instant at, Duration lookBack) {
        List<ClinicalFact> list = byKind.getOrDefault(kind, List.of());
        Instant earliest = lookBack == null ? null : at.minus(lookBack);
        for (int i = indexAfter(list, at) - 1; i >= 0; i--) {
            ClinicalFact fact = list.get(i);
            if (earliest != null && fact.time().isBefore(earliest)) {
                break;
            }
            if (fact instanceof Measurement m && (role == null || m.role() == role)) {
                return Optional.of(m);
            }
        }
        return Optional.empty();
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
        List<ClinicalFact> list = byKind.getOrDefault(kind, List.of());
        int i = indexAfter(list, at) - 1;
        return i >= 0 ? Optional.of(type.cast(list.get(i))) : Optional.empty();
    }

    /** Index of the first fact strictly after {@code at}. */
    private static int indexAfter(List<ClinicalFact> list, Instant at) {
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
        return lo;
    }

    private static void insertSorted(List<ClinicalFact> list, ClinicalFact fact) {
        int pos = Collections.binarySearch(list, fact, CLINICAL_ORDER);
        list.add(pos >= 0 ? pos : -pos - 1, fact);
    }

    private void remove(ResourceEntry entry) {
        for (ClinicalFact fact : entry.facts()) {
            List<ClinicalFact> list = byKind.get(fact.kind());
            if (list != null) {
                list.remove(fact);
            }
        }
    }

    /**
     * Drops facts before the window. For kinds that stay in force (support, position, height, weight) the latest
     * fact before the window is kept.
     */
    private void prune() {
        Instant start = windowStart();
        for (Map.Entry<QuantityKind, List<ClinicalFact>> e : byKind.entrySet()) {
            List<ClinicalFact> list = e.getValue();
            int cut = 0;
            while (cut < list.size() && list.get(cut).time().isBefore(start)) {
                cut++;
            }
            if (e.getKey().staysInForce() && cut > 0) {
                cut--; // keep the state (or body measure) in force at the window start
            }
            if (cut > 0) {
                List<ClinicalFact> dropped = new ArrayList<>(list.subList(0, cut));
                list.subList(0, cut).clear();
                for (ClinicalFact fact : dropped) {
                    String key = fact.source().unversioned();
                    ResourceEntry entry = byResource.get(key);
                    if (entry != null
                            && entry.facts().stream().allMatch(f -> f.time().isBefore(start))) {
                        // a redelivery of it would now fall before the window and be refused as such
                        byResource.remove(key);
                    }
                }
            }
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
