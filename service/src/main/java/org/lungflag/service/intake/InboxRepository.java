package org.lungflag.service.intake;

import java.nio.charset.StandardCharsets;
import java.security.MessageDigest;
import java.security.NoSuchAlgorithmException;
import java.sql.Timestamp;
import java.time.Clock;
import java.time.Duration;
import java.time.Instant;
import java.util.HexFormat;
import java.util.List;
import org.lungflag.service.metrics.LungflagMetrics;
import org.springframework.jdbc.core.namedparam.MapSqlParameterSource;
import org.springframework.jdbc.core.namedparam.NamedParameterJdbcTemplate;
import org.springframework.jdbc.core.namedparam.SqlParameterSource;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.jdbc.support.GeneratedKeyHolder;
import org.springframework.jdbc.support.KeyHolder;
import org.springframework.stereotype.Repository;
import org.springframework.transaction.annotation.Transactional;

/**
 * The durable inbox between intake and evaluation. A row is committed before any channel acknowledges; rows are
 * claimed in batches with {@code FOR UPDATE SKIP LOCKED} so several instances can share one database; the body is
 * cleared once processed, so the inbox never keeps record content.
 */
@Repository
public class InboxRepository {

    static final String NEW = "NEW";
    static final String CLAIMED = "CLAIMED";
    static final String DONE = "DONE";

    /*
     * The statements below run on every round or every catch-up result, against a table that keeps its DONE rows until
     * they are purged. Each names the waiting statuses with IN rather than an OR or a <>, so H2 (the embedded default)
     * reads the status index instead of every row: with OR it walked the whole primary key, with <> the whole table
     * (InboxQueryPlanTest checks the plans; DEVELOPERS.md "Audit store" has the measured cost).
     */

    /** Waiting rows, oldest first: new ones, and claimed ones whose lease expired or that this owner holds. */
    static final String CLAIM_SQL = """
            SELECT id FROM intake_inbox
             WHERE status IN ('NEW', 'CLAIMED')
               AND (status = 'NEW' OR claimed_until < :now OR claimed_by = :owner)
             ORDER BY id
             FETCH FIRST :limit ROWS ONLY
             FOR UPDATE SKIP LOCKED
            """;

    /** One resource version still waiting or in flight. */
    static final String PENDING_SQL = """
            SELECT COUNT(*) FROM intake_inbox
             WHERE resource_id = :id AND resource_type = :type AND version_id = :version
               AND status IN ('NEW', 'CLAIMED')
            """;

    private static final String INSERT_SQL = """
            INSERT INTO intake_inbox (resource_type, resource_id, version_id, channel, body, body_sha256,
                                      received_at, status)
            VALUES (:type, :id, :version, :channel, :body, :sha, :now, 'NEW')
            """;

    static final String BACKLOG_SQL =
            "SELECT COUNT(*), MIN(received_at) FROM intake_inbox WHERE status IN ('NEW', 'CLAIMED')";

    private final JdbcClient jdbc;
    private final Clock clock;
    private final LungflagMetrics metrics;
    private final NamedParameterJdbcTemplate named;

    InboxRepository(JdbcClient jdbc, NamedParameterJdbcTemplate named, Clock clock, LungflagMetrics metrics) {
        this.jdbc = jdbc;
        this.named = named;
        this.clock = clock;
        this.metrics = metrics;
    }

    /** Records one resource body. Returns the inbox id. */
    @Transactional
    public long add(String resourceType, String resourceId, String versionId, InboxChannel channel, String body) {
        KeyHolder keys = new GeneratedKeyHolder();
        jdbc.sql(INSERT_SQL)
                .paramSource(params(row(resourceType, resourceId, versionId, channel, body)))
                .update(keys, "id");
        metrics.received(channel.name());
        return keys.getKeyAs(Number.class).longValue();
    }

    /** A row to record, stamped with its receipt time now (before it waits for a group commit). */
    public NewRow row(String resourceType, String resourceId, String versionId, InboxChannel channel, String body) {
        return new NewRow(resourceType, resourceId, versionId, channel, body, clock.instant());
    }

    /** One notification to record; {@code receivedAt} is when it arrived. */
    public record NewRow(
            String resourceType,
            String resourceId,
            String versionId,
            InboxChannel channel,
            String body,
            Instant receivedAt) {}

    /**
     * Records several rows in one JDBC batch. Call inside a transaction: the caller acknowledges them only after it
     * commits ({@link InboxGroupWriter}).
     */
    public void addAll(List<NewRow> rows) {
        SqlParameterSource[] params = new SqlParameterSource[rows.size()];
        for (int i = 0; i < rows.size(); i++) {
            params[i] = params(rows.get(i));
        }
        named.batchUpdate(INSERT_SQL, params);
        for (NewRow r : rows) {
            metrics.received(r.channel().name());
        }
    }

    private static SqlParameterSource params(NewRow r) {
        return new MapSqlParameterSource()
                .addValue("type", r.resourceType())
                .addValue("id", r.resourceId())
                .addValue("version", r.versionId())
                .addValue("channel", r.channel().name())
                .addValue("body", r.body())
                .addValue("sha", sha256(r.body()))
                .addValue("now", Timestamp.from(r.receivedAt()));
    }

    /** Whether this resource version is already waiting (avoids queuing the same catch-up result twice). */
    public boolean isPending(String resourceType, String resourceId, String versionId) {
        return jdbc.sql(PENDING_SQL)
                        .param("type", resourceType)
                        .param("id", resourceId)
                        .param("version", versionId)
                        .query(Long.class)
                        .single()
                > 0;
    }

    /**
     * Claims up to {@code limit} waiting rows for {@code owner}, oldest first. A claim expires after {@code lease}
     * so rows of a crashed instance are picked up again. Rows still claimed by {@code owner} itself are taken again
     * at once: the owner's one processing thread asks only when its previous batch is finished, so such a row is one
     * whose outcome could not be recorded (the database went away between the claim and the commit or release).
     */
    @Transactional
    public List<InboxItem> claim(String owner, int limit, Duration lease) {
        Instant now = clock.instant();
        List<Long> ids = jdbc.sql(CLAIM_SQL)
                .param("now", Timestamp.from(now))
                .param("owner", owner)
                .param("limit", limit)
                .query(Long.class)
                .list();
        if (ids.isEmpty()) {
            return List.of();
        }
        jdbc.sql("""
                        UPDATE intake_inbox SET status = 'CLAIMED', claimed_by = :owner, claimed_until = :until,
                               attempts = attempts + 1
                         WHERE id IN (:ids)
                        """)
                .param("owner", owner)
                .param("until", Timestamp.from(now.plus(lease)))
                .param("ids", ids)
                .update();
        return jdbc.sql("""
                        SELECT id, resource_type, resource_id, version_id, channel, body, body_sha256, received_at,
                               attempts
                          FROM intake_inbox WHERE id IN (:ids) ORDER BY id
                        """)
                .param("ids", ids)
                .query((rs, n) -> new InboxItem(
                        rs.getLong("id"),
                        rs.getString("resource_type"),
                        rs.getString("resource_id"),
                        rs.getString("version_id"),
                        InboxChannel.valueOf(rs.getString("channel")),
                        rs.getString("body"),
                        rs.getString("body_sha256"),
                        rs.getTimestamp("received_at").toInstant(),
                        rs.getInt("attempts")))
                .list();
    }

    /** Marks rows processed and clears their bodies. Call inside the transaction that recorded their effects. */
    public void markDone(List<Long> ids) {
        if (ids.isEmpty()) {
            return;
        }
        jdbc.sql("""
                        UPDATE intake_inbox SET status = 'DONE', body = NULL, claimed_until = NULL, processed_at = :now
                         WHERE id IN (:ids)
                        """)
                .param("now", Timestamp.from(clock.instant()))
                .param("ids", ids)
                .update();
    }

    /**
     * Puts claimed rows back to be retried after {@code delay} (e.g. the FHIR server was unreachable while a
     * Specimen or Patient had to be read): they stay claimed by nobody until then, so a failing row cannot spin.
     */
    @Transactional
    public void release(List<Long> ids, Duration delay) {
        if (ids.isEmpty()) {
            return;
        }
        jdbc.sql(
                        "UPDATE intake_inbox SET status = 'CLAIMED', claimed_by = NULL, claimed_until = :until WHERE id IN (:ids)")
                .param("until", Timestamp.from(clock.instant().plus(delay)))
                .param("ids", ids)
                .update();
    }

    /** Rows not yet processed, and the receipt time of the oldest. */
    public Backlog backlog() {
        return jdbc.sql(BACKLOG_SQL)
                .query((rs, n) -> new Backlog(
                        rs.getLong(1),
                        rs.getTimestamp(2) == null ? null : rs.getTimestamp(2).toInstant()))
                .single();
    }

    /** The receipt time of the latest rest-hook notification, if any. */
    public Instant lastNotificationAt() {
        Timestamp t = jdbc.sql("SELECT MAX(received_at) FROM intake_inbox WHERE channel = 'REST_HOOK'")
                .query((rs, n) -> rs.getTimestamp(1))
                .list()
                .get(0);
        return t == null ? null : t.toInstant();
    }

    /** Deletes processed rows older than {@code age}; they have been emptied already. */
    @Transactional
    public int purgeDone(Duration age) {
        return jdbc.sql("DELETE FROM intake_inbox WHERE status = 'DONE' AND processed_at < :before")
                .param("before", Timestamp.from(clock.instant().minus(age)))
                .update();
    }

    public record Backlog(long count, Instant oldestReceivedAt) {}

    public static String sha256(String body) {
        if (body == null) {
            return null;
        }
        try {
            MessageDigest digest = MessageDigest.getInstance("SHA-256");
            return HexFormat.of().formatHex(digest.digest(body.getBytes(StandardCharsets.UTF_8)));
        } catch (NoSuchAlgorithmException e) {
            throw new IllegalStateException("SHA-256 is required by the Java platform", e);
        }
    }
}
