package org.lungflag.service.evaluation;

import static org.assertj.core.api.Assertions.assertThat;

import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;
import org.lungflag.service.testsupport.H2QueryPlans;

/**
 * Every stored fact stays in normalized_value, so withdrawing the facts of replaced resources (on every batch that
 * holds a new version) must find them by resource id. Before migration V5 the only index began with the source type,
 * which every Observation shares, and H2 read every stored value for each batch.
 */
class TimelineQueryPlanTest {

    @Test
    void withdrawingFactsFindsThemByResourceId() {
        try (H2QueryPlans plans = H2QueryPlans.migrated()) {
            String plan = plans.plan(
                    TimelineStore.RETRACT_SQL,
                    Map.of("type", "Observation", "ids", List.of("gas-1", "gas-2", "fio2-7")));
            assertThat(plan).contains("normalized_value_source_id: source_id IN(");
            assertThat(plan).doesNotContain("tableScan");
        }
    }
}
