package org.lungflag.service.writeback;

import java.time.Duration;
import java.util.Set;
import org.springframework.boot.context.properties.ConfigurationProperties;
import org.springframework.boot.context.properties.bind.DefaultValue;

/**
 * Write-back settings ({@code lungflag.writeback.*}).
 *
 * @param mode what is written: silent, flags, flags-and-indices
 * @param silentRules rule ids that run in silent mode whatever {@code mode} says (audited, nothing written)
 * @param batchSize outbox rows claimed per delivery round
 * @param lease how long a claimed row is reserved for one delivery attempt before another instance may take it
 * @param initialBackoff first retry delay after a transient failure
 * @param maxBackoff upper bound of the exponential backoff (a random jitter of ±50 % is applied)
 * @param validate whether every outgoing resource is validated against the conformance package before sending
 */
@ConfigurationProperties("lungflag.writeback")
public record WritebackProperties(
        @DefaultValue("flags") WritebackMode mode,
        @DefaultValue Set<String> silentRules,
        @DefaultValue("50") int batchSize,
        @DefaultValue("2m") Duration lease,
        @DefaultValue("2s") Duration initialBackoff,
        @DefaultValue("5m") Duration maxBackoff,
        @DefaultValue("true") boolean validate) {

    public boolean isSilent(String ruleId) {
        return mode == WritebackMode.SILENT || silentRules.contains(ruleId);
    }
}
