package org.lungflag.rules.engine;

import java.nio.charset.StandardCharsets;
import java.security.MessageDigest;
import java.security.NoSuchAlgorithmException;
import java.time.Instant;
import java.util.ArrayList;
import java.util.HexFormat;
import java.util.List;

/**
 * One advisory episode: one rule, one patient, from onset to resolution or expiry. At most one episode per patient
 * and rule is active at a time (design invariant 3). A plain record: the service stores it as JSON.
 *
 * @param key stable key of patient, rule and start; the service uses it as the Flag identifier value
 * @param tier the current (or last) tier's advisory code
 * @param tierHistory every tier change, oldest first (the first entry is the onset)
 * @param end when the episode resolved or expired, {@code null} while active
 */
public record Episode(
        String key,
        String patientId,
        String ruleId,
        String ruleVersion,
        String ruleDigest,
        Instant start,
        String tier,
        List<TierChange> tierHistory,
        EpisodeStatus status,
        Instant end) {

    public Episode {
        tierHistory = List.copyOf(tierHistory);
    }

    static Episode begin(String patientId, String ruleId, String version, String digest, Instant at, String tier) {
        return new Episode(
                key(patientId, ruleId, at),
                patientId,
                ruleId,
                version,
                digest,
                at,
                tier,
                List.of(new TierChange(at, tier)),
                EpisodeStatus.ACTIVE,
                null);
    }

    Episode withTier(Instant at, String newTier) {
        List<TierChange> history = new ArrayList<>(tierHistory);
        history.add(new TierChange(at, newTier));
        return new Episode(key, patientId, ruleId, ruleVersion, ruleDigest, start, newTier, history, status, end);
    }

    Episode closed(EpisodeStatus closedStatus, Instant at) {
        return new Episode(key, patientId, ruleId, ruleVersion, ruleDigest, start, tier, tierHistory, closedStatus, at);
    }

    /** The stable episode key: the first 32 hex digits of SHA-256 over patient id, rule id and start time. */
    public static String key(String patientId, String ruleId, Instant start) {
        try {
            MessageDigest md = MessageDigest.getInstance("SHA-256");
            byte[] hash = md.digest((patientId + "|" + ruleId + "|" + start).getBytes(StandardCharsets.UTF_8));
            return HexFormat.of().formatHex(hash, 0, 16);
        } catch (NoSuchAlgorithmException e) {
            throw new IllegalStateException("SHA-256 is not available", e);
        }
    }
}
