package org.lungflag.rules.pairing;

import static org.assertj.core.api.Assertions.assertThat;

import java.time.Duration;
import java.time.Instant;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.lungflag.rules.measure.Measurement;
import org.lungflag.rules.measure.OriginalQuantity;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SourceRef;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.SupportMode;
import org.lungflag.rules.measure.SupportState;
import org.lungflag.rules.measure.ValueRole;
import org.lungflag.rules.timeline.PatientTimeline;

/** Pairing at the collection time (clinical-reference §10.3, trap 6): in force means at or before, within look-back. */
class PairingTest {

    private static final Instant ANCHOR = Instant.parse("2026-03-02T08:00:00Z");
    private final PatientTimeline timeline = new PatientTimeline("pat-demo-1");
    private final Pairing pairing = new Pairing(PairingSettings.defaults());
    private int next;

    private Measurement add(QuantityKind kind, double value, long minutesFromAnchor, ValueRole role) {
        Measurement m = new Measurement(
                kind,
                value,
                ANCHOR.plus(Duration.ofMinutes(minutesFromAnchor)),
                role,
                kind.isBloodSample() ? SpecimenKind.ARTERIAL : SpecimenKind.NOT_APPLICABLE,
                SourceRef.observation("obs-" + next++, "1"),
                new OriginalQuantity(value, kind.canonicalUnit()),
                List.of());
        timeline.add(m);
        return m;
    }

    @Test
    void neverPairsAValueChartedAfterTheAnchor() {
        Measurement before = add(QuantityKind.FIO2, 0.4, -20, ValueRole.SETTING);
        add(QuantityKind.FIO2, 0.8, 1, ValueRole.SETTING);
        add(QuantityKind.PEEP, 12, 5, ValueRole.SETTING);
        PairedInputs p = pairing.at(timeline, ANCHOR);
        assertThat(p.latest(QuantityKind.FIO2)).contains(before);
        assertThat(p.setting(QuantityKind.PEEP)).isEmpty();
        assertThat(p.isMissing(QuantityKind.PEEP)).isTrue();
        assertThat(p.all()).allSatisfy(m -> assertThat(m.time()).isBeforeOrEqualTo(ANCHOR));
    }

    @Test
    void aValueAtTheAnchorItselfIsInForce() {
        Measurement pao2 = add(QuantityKind.PAO2, 80, 0, ValueRole.MEASUREMENT);
        assertThat(pairing.at(timeline, ANCHOR).measured(QuantityKind.PAO2)).contains(pao2);
    }

    @Test
    void settingsLookBackSixtyMinutes() {
        Measurement inForce = add(QuantityKind.PEEP, 10, -60, ValueRole.SETTING);
        add(QuantityKind.FIO2, 0.5, -61, ValueRole.SETTING);
        PairedInputs p = pairing.at(timeline, ANCHOR);
        assertThat(p.setting(QuantityKind.PEEP)).contains(inForce);
        assertThat(p.setting(QuantityKind.FIO2)).isEmpty();
        MissingInput missing = p.missingOrNull(QuantityKind.FIO2);
        assertThat(missing).isNotNull();
        assertThat(missing.describe()).contains("FiO2").contains("60 min");
    }

    @Test
    void measurementsLookBackThirtyMinutes() {
        Measurement spo2 = add(QuantityKind.SPO2, 0.93, -30, ValueRole.MEASUREMENT);
        add(QuantityKind.PLATEAU_PRESSURE, 25, -31, ValueRole.MEASUREMENT);
        PairedInputs p = pairing.at(timeline, ANCHOR);
        assertThat(p.measured(QuantityKind.SPO2)).contains(spo2);
        assertThat(p.measured(QuantityKind.PLATEAU_PRESSURE)).isEmpty();
        assertThat(p.isMissing(QuantityKind.PLATEAU_PRESSURE)).isTrue();
    }

    @Test
    void aSettingOlderThanTheMeasurementLookBackStillCounts() {
        // the role decides the look-back: a 45-minute-old set VT is in force, a 45-minute-old measured VT is not
        Measurement set = add(QuantityKind.TIDAL_VOLUME, 420, -45, ValueRole.SETTING);
        add(QuantityKind.TIDAL_VOLUME, 410, -45, ValueRole.MEASUREMENT);
        PairedInputs p = pairing.at(timeline, ANCHOR);
        assertThat(p.setting(QuantityKind.TIDAL_VOLUME)).contains(set);
        assertThat(p.measured(QuantityKind.TIDAL_VOLUME)).isEmpty();
        assertThat(p.latest(QuantityKind.TIDAL_VOLUME)).contains(set);
    }

    @Test
    void latestPrefersTheMoreRecentAndTheMeasurementOnATie() {
        add(QuantityKind.FIO2, 0.5, -20, ValueRole.SETTING);
        Measurement measured = add(QuantityKind.FIO2, 0.52, -5, ValueRole.MEASUREMENT);
        assertThat(pairing.at(timeline, ANCHOR).latest(QuantityKind.FIO2)).contains(measured);

        add(QuantityKind.PEEP, 10, -5, ValueRole.SETTING);
        Measurement tie = add(QuantityKind.PEEP, 11, -5, ValueRole.MEASUREMENT);
        assertThat(pairing.at(timeline, ANCHOR).latestOrNull(QuantityKind.PEEP)).isEqualTo(tie);
    }

    @Test
    void bodyMeasuresHaveNoLookBack() {
        Measurement height = add(QuantityKind.BODY_HEIGHT, 175, -40 * 60, ValueRole.MEASUREMENT);
        PairedInputs p = pairing.at(timeline, ANCHOR);
        assertThat(p.latest(QuantityKind.BODY_HEIGHT)).contains(height);
        assertThat(p.missingOrNull(QuantityKind.BODY_WEIGHT).lookBack()).isNull();
        assertThat(p.missingOrNull(QuantityKind.BODY_WEIGHT).describe()).isEqualTo("Body weight not on record");
    }

    @Test
    void listsEveryNumericKindItDidNotFind() {
        add(QuantityKind.PAO2, 80, 0, ValueRole.MEASUREMENT);
        PairedInputs p = pairing.at(timeline, ANCHOR);
        assertThat(p.missing()).extracting(MissingInput::kind).doesNotContain(QuantityKind.PAO2);
        assertThat(p.missing())
                .extracting(MissingInput::kind)
                .contains(QuantityKind.FIO2, QuantityKind.PEEP, QuantityKind.BODY_HEIGHT)
                .doesNotContain(QuantityKind.RESPIRATORY_SUPPORT, QuantityKind.BODY_POSITION);
        assertThat(p.anchor()).isEqualTo(ANCHOR);
    }

    @Test
    void carriesTheSupportInForce() {
        SupportState hfno = new SupportState(
                SupportMode.HIGH_FLOW_NASAL_OXYGEN,
                40.0,
                ANCHOR.minus(Duration.ofHours(3)),
                SourceRef.parse("Procedure/p1"));
        timeline.add(hfno);
        timeline.add(new SupportState(
                SupportMode.INVASIVE_VENTILATION, null, ANCHOR.plusSeconds(60), SourceRef.parse("Procedure/p2")));
        assertThat(pairing.at(timeline, ANCHOR).support()).contains(hfno);
    }

    @Test
    void customLookBacksAreHonoured() {
        add(QuantityKind.FIO2, 0.5, -20, ValueRole.SETTING);
        Pairing strict = new Pairing(new PairingSettings(Duration.ofMinutes(15), Duration.ofMinutes(5)));
        assertThat(strict.at(timeline, ANCHOR).latest(QuantityKind.FIO2)).isEmpty();
    }
}
