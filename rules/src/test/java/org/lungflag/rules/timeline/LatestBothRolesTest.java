package org.lungflag.rules.timeline;

import static org.assertj.core.api.Assertions.assertThat;

import java.time.Duration;
import java.time.Instant;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.OriginalQuantity;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.ValueRole;

/**
 * The one-search form the pairing uses finds what two {@link PatientTimeline#latestAtOrBefore} calls find: the
 * latest setting and the latest measurement at or before the anchor, each within its own look-back
 * (clinical-reference §10.3: never a value after the anchor). Checked on random invented timelines.
 */
class LatestBothRolesTest {

    @Test
    void findsWhatTwoSeparateSearchesFind() {
        Random random = new Random(3);
        Instant t0 = Instant.parse("2026-03-01T00:00:00Z");
        List<Duration> lookBacks = List.of(
                Duration.ZERO,
                Duration.ofMinutes(1),
                Duration.ofMinutes(30),
                Duration.ofMinutes(60),
                Duration.ofHours(6));
        int found = 0;
        for (int round = 0; round < 300; round++) {
            PatientTimeline timeline = new PatientTimeline("p-" + round);
            QuantityKind kind = random.nextBoolean() ? QuantityKind.RESPIRATORY_RATE : QuantityKind.BODY_HEIGHT;
            int n = random.nextInt(40);
            for (int i = 0; i < n; i++) {
                Instant at = t0.plusSeconds(60L * random.nextInt(600));
                ValueRole role = random.nextInt(3) == 0 ? ValueRole.SETTING : ValueRole.MEASUREMENT;
                timeline.add(new Measurement(
                        kind,
                        10 + random.nextInt(20),
                        at,
                        role,
                        SpecimenKind.NOT_APPLICABLE,
                        SourceRef.observation("o" + i, "1"),
                        new OriginalQuantity(10, kind.canonicalUnit()),
                        List.of()));
            }
            Measurement[] out = new Measurement[2];
            for (int q = 0; q < 40; q++) {
                Instant anchor = t0.plusSeconds(60L * random.nextInt(660) - 600 + random.nextInt(2) * 30);
                Duration setting = random.nextInt(5) == 0 ? null : lookBacks.get(random.nextInt(lookBacks.size()));
                Duration measured = random.nextInt(5) == 0 ? null : lookBacks.get(random.nextInt(lookBacks.size()));
                timeline.latestSettingAndMeasurement(kind, anchor, setting, measured, out);
                assertThat(out[0])
                        .isEqualTo(timeline.latestAtOrBefore(kind, ValueRole.SETTING, anchor, setting)
                                .orElse(null));
                assertThat(out[1])
                        .isEqualTo(timeline.latestAtOrBefore(kind, ValueRole.MEASUREMENT, anchor, measured)
                                .orElse(null));
                found += (out[0] != null ? 1 : 0) + (out[1] != null ? 1 : 0);
            }
        }
        assertThat(found).isGreaterThan(1000); // the check saw values, not only empty timelines
    }
}
