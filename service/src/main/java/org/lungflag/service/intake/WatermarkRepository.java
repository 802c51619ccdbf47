package org.lungflag.service.intake;

import java.sql.Timestamp;
import java.time.Clock;
import java.time.Instant;
import java.util.Optional;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.stereotype.Repository;
import org.springframework.transaction.annotation.Transactional;

/** Persisted positions, such as the catch-up search's {@code _lastUpdated} watermark. */
@Repository
class WatermarkRepository {

    private final JdbcClient jdbc;
    private final Clock clock;

    WatermarkRepository(JdbcClient jdbc, Clock clock) {
        this.jdbc = jdbc;
        this.clock = clock;
    }

    Optional<Instant> get(String name) {
        return jdbc.sql("SELECT position FROM watermark WHERE name = :name")
                .param("name", name)
                .query(Timestamp.class)
                .optional()
                .map(Timestamp::toInstant);
    }

    /**
     * Moves the watermark forward (never backward, so two instances cannot rewind each other). The row is created
     * with {@code ON CONFLICT DO NOTHING} first: two instances starting together would otherwise both insert it, and
     * the loser's catch-up search would fail until its next interval.
     */
    @Transactional
    void advance(String name, Instant position) {
        Timestamp now = Timestamp.from(clock.instant());
        jdbc.sql("""
                        INSERT INTO watermark (name, position, updated_at) VALUES (:name, :position, :now)
                        ON CONFLICT DO NOTHING
                        """)
                .param("name", name)
                .param("position", Timestamp.from(position))
                .param("now", now)
                .update();
        jdbc.sql(
                        "UPDATE watermark SET position = :position, updated_at = :now WHERE name = :name AND position < :position")
                .param("name", name)
                .param("position", Timestamp.from(position))
                .param("now", now)
                .update();
    }
}
