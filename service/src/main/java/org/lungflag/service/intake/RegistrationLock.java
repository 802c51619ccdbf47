package org.lungflag.service.intake;

import java.sql.Connection;
import java.sql.SQLException;
import java.util.function.Supplier;
import javax.sql.DataSource;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.stereotype.Component;
import org.springframework.transaction.support.TransactionTemplate;

/**
 * Makes one-time set-up on the FHIR server (Subscription registration) happen one instance at a time when several
 * instances share the audit database: on PostgreSQL a transaction-level advisory lock, held while the work runs, so
 * the second instance finds what the first one created instead of creating it again. On H2 (embedded, one instance
 * per database) a lock in this process.
 */
@Component
class RegistrationLock {

    private final TransactionTemplate tx;
    private final JdbcClient jdbc;
    private final boolean postgres;

    RegistrationLock(TransactionTemplate tx, JdbcClient jdbc, DataSource dataSource) throws SQLException {
        this.tx = tx;
        this.jdbc = jdbc;
        try (Connection c = dataSource.getConnection()) {
            this.postgres =
                    c.getMetaData().getDatabaseProductName().toLowerCase().contains("postgres");
        }
    }

    <T> T holding(String name, Supplier<T> work) {
        if (!postgres) {
            synchronized (this) {
                return work.get();
            }
        }
        return tx.execute(status -> {
            jdbc.sql("SELECT pg_advisory_xact_lock(:key)")
                    .param("key", key(name))
                    .query(Object.class)
                    .list();
            return work.get();
        });
    }

    /** A stable 64-bit key, in a namespace of its own (patient locks hash bare patient ids). */
    static long key(String name) {
        long h = 0x4C554E47464C4147L; // "LUNGFLAG"
        String s = "lungflag-registration:" + name;
        for (int i = 0; i < s.length(); i++) {
            h = 31 * h + s.charAt(i);
        }
        return h;
    }
}
