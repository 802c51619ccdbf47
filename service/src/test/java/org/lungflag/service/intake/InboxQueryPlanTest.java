package org.lungflag.service.intake;

import static org.assertj.core.api.Assertions.assertThat;

import java.sql.Timestamp;
import java.time.Instant;
import java.util.Map;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.lungflag.service.testsupport.H2QueryPlans;

/**
 * The inbox keeps its processed rows until they are purged, so a statement that reads every row slows intake as the
 * table fills. These check, on H2 (the embedded default), that the statements run per round or per catch-up result
 * read an index. Each plan was a full read before the statements were rewritten (primary-key walk for the claim,
 * table scan for the other two); the expected index names are those of migrations V1 and V5.
 */
class InboxQueryPlanTest {

    private static H2QueryPlans plans;

    @BeforeAll
    static void migrate() {
        plans = H2QueryPlans.migrated();
    }

    @AfterAll
    static void close() {
        plans.close();
    }

    @Test
    void claimReadsTheStatusIndexNotEveryRow() {
        String plan = plans.plan(
                InboxRepository.CLAIM_SQL,
                Map.of("now", Timestamp.from(Instant.now()), "owner", "instance-a", "limit", 200));
        assertThat(plan).contains("intake_inbox_pending: status IN('NEW', 'CLAIMED')");
        assertThat(plan).doesNotContain("PRIMARY_KEY").doesNotContain("tableScan");
    }

    @Test
    void pendingLookupReadsTheResourceIndex() {
        String plan =
                plans.plan(InboxRepository.PENDING_SQL, Map.of("type", "Observation", "id", "gas-1", "version", "2"));
        assertThat(plan).contains("intake_inbox_resource:").doesNotContain("tableScan");
    }

    @Test
    void backlogReadsTheStatusIndex() {
        String plan = plans.plan(InboxRepository.BACKLOG_SQL, Map.of());
        assertThat(plan).contains("intake_inbox_pending: status IN('NEW', 'CLAIMED')");
        assertThat(plan).doesNotContain("tableScan");
    }
}
