package org.lungflag.service.intake;

import java.net.URI;
import java.time.Duration;
import org.springframework.boot.context.properties.ConfigurationProperties;
import org.springframework.boot.context.properties.bind.DefaultValue;

/**
 * How Observations reach Lungflag ({@code lungflag.intake.*}).
 *
 * @param hookToken the bearer token the FHIR server must send on every rest-hook call; when blank a random token
 *     is generated at start-up and written into the Subscriptions Lungflag registers (it is never logged)
 * @param publicUrl the URL at which the FHIR server reaches this service, e.g. {@code http://lungflag:8080}; the
 *     Subscriptions point at {@code {publicUrl}/fhir-hook}
 * @param maxBodyBytes larger hook bodies are refused with 413
 * @param registerSubscriptions whether to ensure the Subscriptions exist on the FHIR server at start-up
 * @param catchUpInterval how often the catch-up search runs (HAPI drops notifications after about 60 s of failures)
 * @param catchUpInitialLookBack on the very first start, how far back the catch-up search reaches
 * @param catchUpOverlap how far behind the watermark each search restarts, so a resource committed late is not
 *     missed (duplicates are harmless: intake is idempotent on id + version)
 * @param futureSkew clinical times later than now plus this are refused as future-time
 * @param groupCommitMaxRows at most this many rest-hook notifications are committed to the inbox in one transaction
 *     (each is acknowledged only after its transaction commits); 1 commits each on its own
 */
@ConfigurationProperties("lungflag.intake")
public record IntakeProperties(
        String hookToken,
        URI publicUrl,
        @DefaultValue("1048576") long maxBodyBytes,
        @DefaultValue("true") boolean registerSubscriptions,
        @DefaultValue("2m") Duration catchUpInterval,
        @DefaultValue("48h") Duration catchUpInitialLookBack,
        @DefaultValue("10s") Duration catchUpOverlap,
        @DefaultValue("5m") Duration futureSkew,
        @DefaultValue("100") int groupCommitMaxRows) {}
