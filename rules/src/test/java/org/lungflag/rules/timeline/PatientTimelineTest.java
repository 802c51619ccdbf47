package org.lungflag.rules.timeline;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import java.time.Duration;
import java.time.Instant;
import java.util.List;
import org.junit.jupiter.api.Test;
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
import org.lungflag.rules.measure.UnitRepair;
import org.lungflag.rules.measure.ValueRole;

class PatientTimelineTest {

    static final Instant T0 = Instant.parse("2026-03-01T00:00:00Z");

    static Instant hours(double h) {
        return T0.plusSeconds((long) (h * 3600));
    }

    static Measurement m(QuantityKind kind, double value, Instant time, String id, String version) {
        return new Measurement(
                kind,
                value,
                time,
                ValueRole.MEASUREMENT,
                kind.isBloodSample() ? SpecimenKind.ARTERIAL : SpecimenKind.NOT_APPLICABLE,
                SourceRef.observation(id, version),
                new OriginalQuantity(value, kind.canonicalUnit()),
                List.of());
    }

    private final PatientTimeline timeline = new PatientTimeline("pat-demo-1");

    @Test
    void aRedeliveredResourceChangesNothing() {
        Measurement pao2 = m(QuantityKind.PAO2, 80, hours(1), "o1", "1");
        assertThat(timeline.add(pao2)).isEqualTo(AddResult.ADDED);
        assertThat(timeline.add(pao2)).isEqualTo(AddResult.DUPLICATE);
        assertThat(timeline.add(m(QuantityKind.PAO2, 99, hours(1), "o1", "1"))).isEqualTo(AddResult.DUPLICATE);
        assertThat(timeline.allFacts()).containsExactly(pao2);
        assertThat(timeline.contains(SourceRef.observation("o1", "1"))).isTrue();
    }

    @Test
    void anOlderVersionIsADuplicate() {
        Measurement v3 = m(QuantityKind.PAO2, 80, hours(1), "o1", "3");
        timeline.add(v3);
        assertThat(timeline.add(m(QuantityKind.PAO2, 70, hours(1), "o1", "2"))).isEqualTo(AddResult.DUPLICATE);
        assertThat(timeline.allFacts()).containsExactly(v3);
    }

    @Test
    void versionsCompareNumericallyNotAsText() {
        timeline.add(m(QuantityKind.PAO2, 80, hours(1), "o1", "9"));
        assertThat(timeline.add(m(QuantityKind.PAO2, 81, hours(1), "o1", "10"))).isEqualTo(AddResult.REPLACED);
        assertThat(PatientTimeline.compareVersions("10", "9")).isPositive();
        assertThat(PatientTimeline.compareVersions(null, "1")).isNegative();
    }

    @Test
    void aNewerVersionReplacesEveryFactOfTheResource() {
        SourceRef v1 = SourceRef.observation("gas-1", "1");
        timeline.addResource(
                v1,
                List.of(
                        m(QuantityKind.PAO2, 80, hours(1), "gas-1", "1"),
                        m(QuantityKind.PACO2, 40, hours(1), "gas-1", "1")));
        Measurement corrected = m(QuantityKind.PAO2, 85, hours(1), "gas-1", "2");
        assertThat(timeline.addResource(SourceRef.observation("gas-1", "2"), List.of(corrected)))
                .isEqualTo(AddResult.REPLACED);
        assertThat(timeline.allFacts()).containsExactly(corrected);
        assertThat(timeline.contains(v1)).isTrue(); // v1 is older than what is on the timeline
    }

    @Test
    void aRetractedResourceDisappearsAndItsTimesAreReturned() {
        timeline.add(m(QuantityKind.PAO2, 80, hours(1), "o1", "1"));
        timeline.add(m(QuantityKind.PAO2, 70, hours(2), "o2", "1"));
        assertThat(timeline.retract("Observation", "o1")).containsExactly(hours(1));
        assertThat(timeline.measurements(QuantityKind.PAO2))
                .extracting(Measurement::value)
                .containsExactly(70.0);
        assertThat(timeline.retract("Observation", "o1")).isEmpty();
        assertThat(timeline.retract("Observation", "never-seen")).isEmpty();
        // after a retraction the same id may come back (e.g. re-entered)
        assertThat(timeline.add(m(QuantityKind.PAO2, 81, hours(1), "o1", "2"))).isEqualTo(AddResult.ADDED);
    }

    @Test
    void factsOlderThanTheWindowArePrunedAndRefused() {
        timeline.add(m(QuantityKind.PAO2, 80, hours(0), "o1", "1"));
        timeline.add(m(QuantityKind.PAO2, 70, hours(49), "o2", "1"));
        assertThat(timeline.measurements(QuantityKind.PAO2))
                .extracting(Measurement::value)
                .containsExactly(70.0);
        assertThat(timeline.windowStart()).isEqualTo(hours(1));
        assertThat(timeline.add(m(QuantityKind.PAO2, 60, hours(0.5), "o3", "1")))
                .isEqualTo(AddResult.OUTSIDE_WINDOW);
        assertThat(timeline.add(m(QuantityKind.PAO2, 60, hours(1), "o4", "1")))
                .as("the window start itself is inside")
                .isEqualTo(AddResult.ADDED);
    }

    @Test
    void pruningKeepsTheStateInForceAtTheWindowStart() {
        SupportState intubated =
                new SupportState(SupportMode.INVASIVE_VENTILATION, null, hours(0), SourceRef.parse("Procedure/p1"));
        PositionState prone =
                new PositionState(BodyPosition.PRONE, hours(2), SourceRef.parse("Observation/pos-1/_history/1"));
        Measurement height = m(QuantityKind.BODY_HEIGHT, 175, hours(0), "h1", "1");
        Measurement oldWeight = m(QuantityKind.BODY_WEIGHT, 80, hours(0), "w1", "1");
        Measurement newerWeight = m(QuantityKind.BODY_WEIGHT, 79, hours(3), "w2", "1");
        timeline.add(intubated);
        timeline.add(prone);
        timeline.add(height);
        timeline.add(oldWeight);
        timeline.add(newerWeight);
        timeline.add(m(QuantityKind.PAO2, 80, hours(3), "o0", "1"));
        timeline.add(m(QuantityKind.PAO2, 70, hours(60), "o1", "1"));

        assertThat(timeline.supportAt(hours(60))).contains(intubated);
        assertThat(timeline.positionAt(hours(60))).contains(prone);
        assertThat(timeline.latestAtOrBefore(QuantityKind.BODY_HEIGHT, null, hours(60), null))
                .contains(height);
        assertThat(timeline.measurements(QuantityKind.BODY_WEIGHT)).containsExactly(newerWeight);
        assertThat(timeline.measurements(QuantityKind.PAO2))
                .extracting(Measurement::value)
                .containsExactly(70.0);
    }

    @Test
    void anOldHeightArrivingAfterTheWindowMovedOnIsStillTheHeightInForce() {
        // order must not matter (invariant 2): the same height charted days ago, delivered late (hydration)
        timeline.add(m(QuantityKind.PAO2, 70, hours(60), "o1", "1"));
        Measurement height = m(QuantityKind.BODY_HEIGHT, 175, hours(0), "h1", "1");
        assertThat(timeline.add(height)).isEqualTo(AddResult.ADDED);
        assertThat(timeline.latestAtOrBefore(QuantityKind.BODY_HEIGHT, null, hours(60), null))
                .contains(height);

        Measurement older = m(QuantityKind.BODY_HEIGHT, 170, hours(-10), "h0", "1");
        assertThat(timeline.add(older)).as("superseded before the window").isEqualTo(AddResult.OUTSIDE_WINDOW);
        assertThat(timeline.measurements(QuantityKind.BODY_HEIGHT)).containsExactly(height);
    }

    @Test
    void aCorrectedOldHeightReplacesTheHeightInForce() {
        timeline.add(m(QuantityKind.BODY_HEIGHT, 157, hours(0), "h1", "1"));
        timeline.add(m(QuantityKind.PAO2, 70, hours(60), "o1", "1"));
        Measurement corrected = m(QuantityKind.BODY_HEIGHT, 175, hours(0), "h1", "2");
        assertThat(timeline.add(corrected)).isEqualTo(AddResult.REPLACED);
        assertThat(timeline.measurements(QuantityKind.BODY_HEIGHT)).containsExactly(corrected);
    }

    @Test
    void aResourceStaysKnownWhileAnyOfItsFactsIsKept() {
        // one body-measure resource with height and weight; a newer weight before the window drops the old weight
        SourceRef body = SourceRef.observation("body-1", "1");
        Measurement height = m(QuantityKind.BODY_HEIGHT, 175, hours(0), "body-1", "1");
        timeline.addResource(body, List.of(height, m(QuantityKind.BODY_WEIGHT, 80, hours(0), "body-1", "1")));
        timeline.add(m(QuantityKind.BODY_WEIGHT, 78, hours(5), "w2", "1"));
        timeline.add(m(QuantityKind.PAO2, 70, hours(60), "o1", "1"));
        assertThat(timeline.measurements(QuantityKind.BODY_HEIGHT)).containsExactly(height);
        // a redelivery is still a duplicate and does not double the height
        assertThat(timeline.addResource(
                        body, List.of(height, m(QuantityKind.BODY_WEIGHT, 80, hours(0), "body-1", "1"))))
                .isEqualTo(AddResult.DUPLICATE);
        assertThat(timeline.measurements(QuantityKind.BODY_HEIGHT)).hasSize(1);
    }

    @Test
    void latestAtOrBeforeNeverLooksAfterTheAnchorAndRespectsRoleAndLookBack() {
        Measurement before = m(QuantityKind.FIO2, 0.4, hours(10), "f1", "1");
        Measurement after = m(QuantityKind.FIO2, 0.9, hours(10.1), "f2", "1");
        timeline.add(before);
        timeline.add(after);
        assertThat(timeline.latestAtOrBefore(QuantityKind.FIO2, null, hours(10.05), Duration.ofMinutes(60)))
                .contains(before);
        assertThat(timeline.latestAtOrBefore(QuantityKind.FIO2, null, hours(10), Duration.ofMinutes(60)))
                .as("at the anchor itself counts")
                .contains(before);
        assertThat(timeline.latestAtOrBefore(QuantityKind.FIO2, null, hours(11.5), Duration.ofMinutes(60)))
                .isEmpty();
        assertThat(timeline.latestAtOrBefore(QuantityKind.FIO2, ValueRole.SETTING, hours(10.5), null))
                .isEmpty();
    }

    @Test
    void materializedFactsEqualWhatWasAdded() {
        Measurement withRepair = new Measurement(
                QuantityKind.FIO2,
                0.4,
                Instant.parse("2026-03-01T10:15:30.123456789Z"),
                ValueRole.SETTING,
                SpecimenKind.NOT_APPLICABLE,
                new SourceRef("Observation", "5f0c2a7e-2b8e-4f55-9a55-1c2d3e4f5a6b", null),
                new OriginalQuantity(0.4, "%"),
                List.of(new UnitRepair(
                        "fio2-fraction-charted-as-percent", "FiO2 0.4 charted with unit % read as 0.4")));
        Measurement venous = new Measurement(
                QuantityKind.PAO2,
                40,
                hours(1),
                ValueRole.MEASUREMENT,
                SpecimenKind.VENOUS,
                new SourceRef("Observation", "0042", "v7"),
                new OriginalQuantity(5.33, "kPa"),
                List.of());
        timeline.add(withRepair);
        timeline.add(venous);
        assertThat(timeline.allFacts()).containsExactly(venous, withRepair);
        assertThat(timeline.facts(QuantityKind.FIO2)).containsExactly(withRepair);
        assertThat(timeline.contains(new SourceRef("Observation", "0042", "v7")))
                .isTrue();
        assertThat(timeline.contains(new SourceRef("Observation", "42", "v7"))).isFalse();
    }

    @Test
    void resourceIdsOfEveryShapeRoundTrip() {
        List<String> ids = List.of(
                "0",
                "7",
                "104233",
                "0042",
                "obs-0",
                "obs-007",
                "obs-104233",
                "12345678901234567890",
                "5f0c2a7e-2b8e-4f55-9a55-1c2d3e4f5a6b",
                "5F0C2A7E-2B8E-4F55-9A55-1C2D3E4F5A6B",
                "a.b-c",
                "x9y");
        for (int i = 0; i < ids.size(); i++) {
            timeline.add(m(QuantityKind.PAO2, 80 + i, hours(1 + i / 10.0), ids.get(i), "1"));
        }
        assertThat(timeline.measurements(QuantityKind.PAO2))
                .extracting(x -> x.source().id())
                .containsExactlyElementsOf(ids);
        for (String id : ids) {
            assertThat(timeline.contains(SourceRef.observation(id, "1"))).as(id).isTrue();
        }
        assertThat(timeline.contains(SourceRef.observation("obs-7", "1"))).isFalse();
        assertThat(timeline.contains(SourceRef.observation("obs-07", "1"))).isFalse();
    }

    @Test
    void factsOfAnotherResourceAreRejected() {
        assertThatThrownBy(() -> timeline.addResource(
                        SourceRef.observation("a", "1"), List.of(m(QuantityKind.PAO2, 80, hours(1), "b", "1"))))
                .isInstanceOf(IllegalArgumentException.class)
                .hasMessageContaining("Observation/b");
    }

    @Test
    void sizeCountsEveryFactKept() {
        timeline.add(m(QuantityKind.PAO2, 80, hours(1), "o1", "1"));
        timeline.add(new SupportState(SupportMode.ROOM_AIR, null, hours(1), SourceRef.parse("Observation/s1")));
        assertThat(timeline.size()).isEqualTo(2);
        List<ClinicalFact> all = timeline.allFacts();
        assertThat(all).hasSize(2);
    }
}
