package org.lungflag.service.audit;

import java.sql.Timestamp;
import java.time.Instant;
import java.util.List;
import org.springframework.jdbc.core.namedparam.MapSqlParameterSource;
import org.springframework.jdbc.core.namedparam.NamedParameterJdbcTemplate;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.stereotype.Repository;

/** Every resource version that reached normalization (id, version, hash, clinical time) and its outcome. */
@Repository
public class ReceivedResourceRepository {

    /** What became of a received resource version. */
    public enum Outcome {
        USED,
        DUPLICATE,
        REPLACED_OLDER,
        QUARANTINED,
        PARTLY_QUARANTINED,
        RETRACTED,
        OUTSIDE_WINDOW
    }

    private final JdbcClient jdbc;
    private final NamedParameterJdbcTemplate named;

    ReceivedResourceRepository(JdbcClient jdbc, NamedParameterJdbcTemplate named) {
        this.jdbc = jdbc;
        this.named = named;
    }

    /** One received resource version and what became of it. */
    public record Received(
            String resourceType,
            String resourceId,
            String versionId,
            String bodySha256,
            String patientId,
            Instant clinicalTime,
            String channel,
            Instant receivedAt,
            Outcome outcome) {}

    /** Records several in one JDBC batch, in order. */
    public void addAll(List<Received> rows) {
        if (rows.isEmpty()) {
            return;
        }
        named.batchUpdate(
                """
                INSERT INTO received_resource (resource_type, resource_id, version_id, body_sha256, patient_id,
                                               clinical_time, channel, received_at, outcome)
                VALUES (:type, :id, :version, :sha, :patient, :time, :channel, :received, :outcome)
                """,
                rows.stream()
                        .map(r -> new MapSqlParameterSource()
                                .addValue("type", r.resourceType())
                                .addValue("id", r.resourceId())
                                .addValue("version", r.versionId())
                                .addValue("sha", r.bodySha256())
                                .addValue("patient", r.patientId())
                                .addValue("time", r.clinicalTime() == null ? null : Timestamp.from(r.clinicalTime()))
                                .addValue("channel", r.channel())
                                .addValue("received", Timestamp.from(r.receivedAt()))
                                .addValue("outcome", r.outcome().name()))
                        .toArray(MapSqlParameterSource[]::new));
    }

    /** Whether this exact version was already processed (whatever the outcome). */
    public boolean seen(String resourceType, String resourceId, String versionId) {
        if (versionId == null) {
            return false;
        }
        return jdbc.sql("""
                        SELECT COUNT(*) FROM received_resource
                         WHERE resource_type = :type AND resource_id = :id AND version_id = :version
                        """)
                        .param("type", resourceType)
                        .param("id", resourceId)
                        .param("version", versionId)
                        .query(Long.class)
                        .single()
                > 0;
    }

    /** The patient a resource belonged to, from its latest processed version. */
    public java.util.Optional<String> patientOf(String resourceType, String resourceId) {
        return jdbc.sql("""
                        SELECT patient_id FROM received_resource
                         WHERE resource_type = :type AND resource_id = :id AND patient_id IS NOT NULL
                         ORDER BY id DESC FETCH FIRST 1 ROWS ONLY
                        """)
                .param("type", resourceType)
                .param("id", resourceId)
                .query(String.class)
                .optional();
    }

    public long count() {
        return jdbc.sql("SELECT COUNT(*) FROM received_resource")
                .query(Long.class)
                .single();
    }
}
