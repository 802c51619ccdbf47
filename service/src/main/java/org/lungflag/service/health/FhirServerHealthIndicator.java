package org.lungflag.service.health;

import ca.uhn.fhir.rest.client.api.IGenericClient;
import java.time.Clock;
import java.time.Duration;
import java.time.Instant;
import org.hl7.fhir.r4.model.CapabilityStatement;
import org.springframework.boot.actuate.health.Health;
import org.springframework.boot.actuate.health.HealthIndicator;
import org.springframework.stereotype.Component;

/**
 * Whether the FHIR server answers ({@code GET /metadata}), checked at most every 30 s so health probes do not load
 * it. DOWN means write-back and catch-up are waiting; nothing is lost meanwhile (the outbox keeps every write).
 */
@Component("fhirServer")
class FhirServerHealthIndicator implements HealthIndicator {

    private static final Duration CACHE = Duration.ofSeconds(30);

    private final IGenericClient client;
    private final Clock clock;
    private volatile Health last;
    private volatile Instant checkedAt;

    FhirServerHealthIndicator(IGenericClient client, Clock clock) {
        this.client = client;
        this.clock = clock;
    }

    @Override
    public Health health() {
        Instant now = clock.instant();
        if (last != null && checkedAt.plus(CACHE).isAfter(now)) {
            return last;
        }
        Health health;
        try {
            CapabilityStatement cs =
                    client.capabilities().ofType(CapabilityStatement.class).execute();
            health = Health.up()
                    .withDetail("baseUrl", client.getServerBase())
                    .withDetail(
                            "fhirVersion",
                            cs.hasFhirVersion() ? cs.getFhirVersion().toCode() : "unknown")
                    .build();
        } catch (RuntimeException e) {
            health = Health.down()
                    .withDetail("baseUrl", client.getServerBase())
                    .withDetail("error", e.getClass().getSimpleName())
                    .build();
        }
        last = health;
        checkedAt = now;
        return health;
    }
}
