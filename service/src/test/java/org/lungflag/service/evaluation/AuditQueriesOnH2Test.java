package org.lungflag.service.evaluation;

import org.springframework.boot.test.context.SpringBootTest;
import org.springframework.test.context.ActiveProfiles;
import org.springframework.test.context.TestPropertySource;

/** The audit API's store queries on the embedded H2 (PostgreSQL mode). */
@SpringBootTest
@ActiveProfiles("test")
@TestPropertySource(
        properties = {
            "lungflag.fhir.base-url=http://127.0.0.1:9/fhir",
            "lungflag.evaluation.processor-enabled=false",
            "lungflag.writeback.poll-interval=1h"
        })
class AuditQueriesOnH2Test extends AuditQueriesContract {}
