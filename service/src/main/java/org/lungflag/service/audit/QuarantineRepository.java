package org.lungflag.service.audit;

import java.sql.ResultSet;
import java.sql.SQLException;
import java.sql.Timestamp;
import java.time.Clock;
import java.util.List;
import org.lungflag.rules.quality.DataQualityReason;
import org.lungflag.service.metrics.LungflagMetrics;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.stereotype.Repository;

/** The quarantine: every refused input or output, with its reason. Nothing refused is silent. */
@Repository
public class QuarantineRepository {

    private static final Logger log = LoggerFactory.getLogger(QuarantineRepository.class);
    private static final int EXCERPT_CHARS = 2000;

    private final JdbcClient jdbc;
    private final Clock clock;
    private final LungflagMetrics metrics;

    QuarantineRepository(JdbcClient jdbc, Clock clock, LungflagMetrics metrics) {
        this.jdbc = jdbc;
        this.clock = clock;
        this.metrics = metrics;
    }

    /** A refusal of something we can point back to (resource type, id, version). */
    public record Refusal(
            QuarantineStage stage,
            String resourceType,
            String resourceId,
            String versionId,
            String patientId,
            DataQualityReason reason,
            String detail,
            String serverOutcome,
            String bodySha256,
            String unparseableBody) {}

    /** Records a refusal. Joins the caller's transaction when there is one. */
    public void add(Refusal r) {
        String excerpt = null;
        if (r.unparseableBody() != null && r.resourceId() == null) {
            excerpt = r.unparseableBody().length() > EXCERPT_CHARS
                    ? r.unparseableBody().substring(0, EXCERPT_CHARS)
                    : r.unparseableBody();
        }
        jdbc.sql("""
                        INSERT INTO quarantine (stage, resource_type, resource_id, version_id, patient_id, reason_code,
                                                detail, server_outcome, body_sha256, body_excerpt, created_at)
                        VALUES (:stage, :type, :id, :version, :patient, :reason, :detail, :outcome, :sha, :excerpt, :now)
                        """)
                .param("stage", r.stage().name())
                .param("type", r.resourceType())
                .param("id", r.resourceId())
                .param("version", r.versionId())
                .param("patient", r.patientId())
                .param("reason", r.reason().code())
                .param("detail", r.detail())
                .param("outcome", r.serverOutcome())
                .param("sha", r.bodySha256())
                .param("excerpt", excerpt)
                .param("now", Timestamp.from(clock.instant()))
                .update();
        metrics.rejected(r.stage().name(), r.reason().code());
        log.info(
                "quarantined {} {}/{} reason={}",
                r.stage(),
                r.resourceType() == null ? "-" : r.resourceType(),
                r.resourceId() == null ? "-" : r.resourceId(),
                r.reason().code());
    }

    public long count() {
        return jdbc.sql("SELECT COUNT(*) FROM quarantine").query(Long.class).single();
    }

    /** The most recent entries, newest first. */
    public List<QuarantineEntry> recent(int limit) {
        return jdbc.sql("SELECT * FROM quarantine ORDER BY id DESC FETCH FIRST :limit ROWS ONLY")
                .param("limit", limit)
                .query(QuarantineRepository::map)
                .list();
    }

    /** Entries about one resource, oldest first. */
    public List<QuarantineEntry> forResource(String resourceType, String resourceId) {
        return jdbc.sql("SELECT * FROM quarantine WHERE resource_type = :type AND resource_id = :id ORDER BY id")
                .param("type", resourceType)
                .param("id", resourceId)
                .query(QuarantineRepository::map)
                .list();
    }

    static QuarantineEntry map(ResultSet rs, int row) throws SQLException {
        return new QuarantineEntry(
                rs.getLong("id"),
                QuarantineStage.valueOf(rs.getString("stage")),
                rs.getString("resource_type"),
                rs.getString("resource_id"),
                rs.getString("version_id"),
                rs.getString("patient_id"),
                rs.getString("reason_code"),
                rs.getString("detail"),
                rs.getString("server_outcome"),
                rs.getString("body_sha256"),
                rs.getString("body_excerpt"),
                rs.getTimestamp("created_at").toInstant());
    }
}
