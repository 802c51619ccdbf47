package org.lungflag.service.writeback;

import static org.assertj.core.api.Assertions.assertThat;

import java.sql.Timestamp;
import java.time.Instant;
import java.util.Map;
import org.junit.jupiter.api.Test;
import org.lungflag.service.testsupport.H2QueryPlans;

/**
 * Delivered outbox rows stay in the table (the audit trail of what was written), so the claim that runs every
 * delivery round must not read them all. On H2 the earlier form (an OR of two status conditions) walked the whole
 * primary key; this checks that the claim reads the pending index and the per-patient index.
 */
class OutboxQueryPlanTest {

    @Test
    void claimReadsThePendingIndexNotEveryRow() {
        try (H2QueryPlans plans = H2QueryPlans.migrated()) {
            String plan =
                    plans.plan(OutboxRepository.CLAIM_SQL, Map.of("now", Timestamp.from(Instant.now()), "limit", 50));
            assertThat(plan).contains("outbox_pending: status IN('PENDING', 'SENDING') AND next_attempt_at <=");
            assertThat(plan).contains("outbox_patient: patient_id = o.patient_id");
            assertThat(plan).doesNotContain("PRIMARY_KEY").doesNotContain("tableScan");
        }
    }
}
