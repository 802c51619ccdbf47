package org.lungflag.rules.timeline;

import static org.assertj.core.api.Assertions.assertThat;

import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Collections;
import java.util.Comparator;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.Random;
import java.util.UUID;
import net.jqwik.api.Arbitraries;
import net.jqwik.api.Arbitrary;
import net.jqwik.api.Combinators;
import net.jqwik.api.ForAll;
import net.jqwik.api.Property;
import net.jqwik.api.Provide;
import org.lungflag.rules.measure.BodyPosition;
import org.lungflag.rules.measure.ClinicalFact;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.OriginalQuantity;
import org.lungflag.rules.measure.PositionState;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.SupportMode;
import org.lungflag.rules.measure.SupportState;
import org.lungflag.rules.measure.ValueRole;

/**
 * Design invariant 2 for the timeline: whatever order resources (and redeliveries, and newer versions) arrive in,
 * {@code allFacts()} is the same, and it is what a direct model of the rules says: the newest version of each
 * resource, inside the window behind the latest time, plus the latest fact before the window of each kind that
 * stays in force.
 */
class PatientTimelinePropertyTest {

    private static final Instant T0 = Instant.parse("2026-03-01T00:00:00Z");
    private static final Duration WINDOW = Duration.ofHours(48);
    private static final List<QuantityKind> KINDS = List.of(
            QuantityKind.PAO2,
            QuantityKind.FIO2,
            QuantityKind.PEEP,
            QuantityKind.BODY_HEIGHT,
            QuantityKind.BODY_WEIGHT,
            QuantityKind.RESPIRATORY_SUPPORT,
            QuantityKind.BODY_POSITION);

    /** One resource: id form, kinds it yields, clinical time (minutes), number of versions. */
    record Resource(int n, int idForm, List<QuantityKind> kinds, int minutes, int versions) {
        String id() {
            return switch (idForm) {
                case 0 -> Integer.toString(1000 + n);
                case 1 -> new UUID(42L, n).toString();
                case 2 -> "obs-" + n;
                case 3 -> "gas-00" + n;
                default -> "obs-" + n + ".x";
            };
        }

        Instant time() {
            return T0.plus(Duration.ofMinutes(minutes));
        }

        List<ClinicalFact> facts(int version) {
            SourceRef src = SourceRef.observation(id(), Integer.toString(version));
            List<ClinicalFact> out = new ArrayList<>();
            for (QuantityKind k : kinds) {
                out.add(
                        switch (k) {
                            case RESPIRATORY_SUPPORT ->
                                new SupportState(
                                        version % 2 == 0
                                                ? SupportMode.INVASIVE_VENTILATION
                                                : SupportMode.HIGH_FLOW_NASAL_OXYGEN,
                                        40.0,
                                        time(),
                                        src);
                            case BODY_POSITION ->
                                new PositionState(
                                        version % 2 == 0 ? BodyPosition.PRONE : BodyPosition.SUPINE, time(), src);
                            default ->
                                new Measurement(
                                        k,
                                        n * 10 + version,
                                        time(),
                                        k == QuantityKind.FIO2 ? ValueRole.SETTING : ValueRole.MEASUREMENT,
                                        k.isBloodSample() ? SpecimenKind.ARTERIAL : SpecimenKind.NOT_APPLICABLE,
                                        src,
                                        new OriginalQuantity(n + version / 10.0, k == QuantityKind.PAO2 ? "kPa" : "1"),
                                        List.of());
                        });
            }
            return out;
        }
    }

    /** A delivery of one version of one resource. */
    record Delivery(Resource resource, int version) {}

    @Provide
    Arbitrary<List<Resource>> resources() {
        Arbitrary<Resource> one = Combinators.combine(
                        Arbitraries.integers().between(0, 4),
                        Arbitraries.of(KINDS).list().ofMinSize(1).ofMaxSize(2).uniqueElements(),
                        Arbitraries.integers().between(0, 100 * 60),
                        Arbitraries.integers().between(1, 3))
                .as((form, kinds, minutes, versions) -> new Resource(0, form, kinds, minutes, versions));
        return one.list().ofMinSize(1).ofMaxSize(40).map(list -> {
            List<Resource> numbered = new ArrayList<>();
            for (int i = 0; i < list.size(); i++) {
                Resource r = list.get(i);
                numbered.add(new Resource(i, r.idForm(), r.kinds(), r.minutes(), r.versions()));
            }
            return numbered;
        });
    }

    private static List<Delivery> deliveries(List<Resource> resources, Random random) {
        List<Delivery> out = new ArrayList<>();
        for (Resource r : resources) {
            for (int v = 1; v <= r.versions(); v++) {
                out.add(new Delivery(r, v));
                if (random.nextInt(3) == 0) {
                    out.add(new Delivery(r, v)); // redelivery
                }
            }
        }
        Collections.shuffle(out, random);
        return out;
    }

    private static PatientTimeline replay(List<Delivery> deliveries) {
        PatientTimeline t = new PatientTimeline("pat-demo-1", WINDOW);
        for (Delivery d : deliveries) {
            SourceRef src = SourceRef.observation(d.resource().id(), Integer.toString(d.version()));
            t.addResource(src, d.resource().facts(d.version()));
            t.checkConsistency();
        }
        return t;
    }

    /** The rules written directly. */
    private static List<ClinicalFact> model(List<Resource> resources) {
        List<ClinicalFact> newest = new ArrayList<>();
        for (Resource r : resources) {
            newest.addAll(r.facts(r.versions()));
        }
        Instant latest = newest.stream()
                .map(ClinicalFact::time)
                .max(Comparator.naturalOrder())
                .orElseThrow();
        Instant start = latest.minus(WINDOW);
        Map<QuantityKind, ClinicalFact> inForce = new HashMap<>();
        List<ClinicalFact> kept = new ArrayList<>();
        for (ClinicalFact f : newest) {
            if (!f.time().isBefore(start)) {
                kept.add(f);
            } else if (f.kind().staysInForce()) {
                inForce.merge(f.kind(), f, (a, b) -> PatientTimeline.CLINICAL_ORDER.compare(a, b) >= 0 ? a : b);
            }
        }
        kept.addAll(inForce.values());
        kept.sort(PatientTimeline.CLINICAL_ORDER);
        return kept;
    }

    @Property(tries = 300)
    void insertionOrderNeverChangesAllFacts(
            @ForAll("resources") List<Resource> resources, @ForAll Random first, @ForAll Random second) {
        PatientTimeline a = replay(deliveries(resources, first));
        PatientTimeline b = replay(deliveries(resources, second));
        assertThat(a.allFacts()).isEqualTo(b.allFacts());
        assertThat(a.allFacts()).isEqualTo(model(resources));
        assertThat(a.size()).isEqualTo(a.allFacts().size());
    }

    @Property(tries = 200)
    void retractionRemovesExactlyTheResourcesFacts(
            @ForAll("resources") List<Resource> resources, @ForAll Random random) {
        PatientTimeline t = replay(deliveries(resources, random));
        Resource gone = resources.get(random.nextInt(resources.size()));
        List<ClinicalFact> before = t.allFacts();
        List<Instant> removed = t.retract("Observation", gone.id());
        t.checkConsistency();
        List<ClinicalFact> expected = new ArrayList<>(before);
        expected.removeIf(f -> f.source().id().equals(gone.id()));
        assertThat(t.allFacts()).isEqualTo(expected);
        assertThat(removed).hasSize(before.size() - expected.size());
        assertThat(t.contains(SourceRef.observation(gone.id(), "1"))).isFalse();
    }
}
