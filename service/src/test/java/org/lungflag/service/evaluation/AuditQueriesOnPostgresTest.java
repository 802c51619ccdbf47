package org.lungflag.service.evaluation;

import java.util.UUID;
import org.lungflag.service.testsupport.PostgresCondition;
import org.lungflag.service.testsupport.RequiresPostgres;
import org.springframework.boot.test.context.SpringBootTest;
import org.springframework.test.context.ActiveProfiles;
import org.springframework.test.context.DynamicPropertyRegistry;
import org.springframework.test.context.DynamicPropertySource;
import org.springframework.test.context.TestPropertySource;

/**
 * The audit API's store queries on PostgreSQL (the CI database at 127.0.0.1:5432/test), in a schema of its own per run
 * so runs never see each other's rows. Skipped where there is no PostgreSQL, never under CI=true.
 */
@RequiresPostgres
@SpringBootTest
@ActiveProfiles("test")
@TestPropertySource(
        properties = {
            "lungflag.fhir.base-url=http://127.0.0.1:9/fhir",
            "lungflag.evaluation.processor-enabled=false",
            "lungflag.writeback.poll-interval=1h"
        })
class AuditQueriesOnPostgresTest extends AuditQueriesContract {

    private static final String SCHEMA =
            "lf_test_" + UUID.randomUUID().toString().replace("-", "").substring(0, 12);

    @DynamicPropertySource
    static void postgres(DynamicPropertyRegistry registry) {
        registry.add("spring.datasource.url", () -> PostgresCondition.url() + "?currentSchema=" + SCHEMA);
        registry.add("spring.datasource.username", PostgresCondition::user);
        registry.add("spring.datasource.password", () -> "");
        registry.add("spring.flyway.schemas", () -> SCHEMA);
        registry.add("spring.flyway.create-schemas", () -> "true");
    }
}
