package org.lungflag.sandbox.fhirserver;

import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.sql.Connection;
import java.sql.SQLException;
import java.sql.Statement;
import java.util.Optional;
import java.util.concurrent.atomic.AtomicInteger;
import javax.sql.DataSource;
import org.apache.commons.dbcp2.BasicDataSource;
import org.h2.api.ErrorCode;

/**
 * The H2 database behind one sandbox server: in memory (gone on close) or in files under a data directory (kept for
 * the next run). Closing shuts the database down cleanly before the pool closes.
 */
final class H2Database implements AutoCloseable {

    /** Database file name stem inside the data directory (H2 adds {@code .mv.db}). */
    static final String FILE_STEM = "fhir";

    private static final AtomicInteger IN_MEMORY_COUNTER = new AtomicInteger();

    private final BasicDataSource pool;
    private final String description;

    private H2Database(String url, String description) {
        this.description = description;
        this.pool = new BasicDataSource();
        pool.setDriverClassName(org.h2.Driver.class.getName());
        pool.setUrl(url);
        pool.setUsername("sa");
        pool.setPassword("");
        // HAPI can hold more than one connection per request (search, subscription delivery, batch jobs).
        pool.setMaxTotal(20);
    }

    static H2Database open(Optional<Path> dataDirectory) {
        H2Database database;
        if (dataDirectory.isPresent()) {
            Path directory = dataDirectory.get();
            try {
                Files.createDirectories(directory);
            } catch (IOException e) {
                throw new IllegalStateException("Cannot create the sandbox data directory " + directory + ": " + e, e);
            }
            // No fhir.trace.db: at every start Hibernate's temporary-table DDL for HAPI's entities fails harmlessly
            // (duplicate column names) and H2 would log each failure there.
            database = new H2Database(
                    "jdbc:h2:file:" + directory.resolve(FILE_STEM) + ";TRACE_LEVEL_FILE=0",
                    "file database in " + directory);
        } else {
            String name = "lungflag-sandbox-" + IN_MEMORY_COUNTER.incrementAndGet();
            // Kept open until close() shuts it down, whatever the pool does with idle connections.
            database = new H2Database("jdbc:h2:mem:" + name + ";DB_CLOSE_DELAY=-1", "in-memory database " + name);
        }
        database.checkReachable();
        return database;
    }

    DataSource dataSource() {
        return pool;
    }

    String description() {
        return description;
    }

    /** Fails at start-up, with a sentence that says what to do, rather than at HAPI's first query. */
    private void checkReachable() {
        try (Connection ignored = pool.getConnection()) {
            // opened and closed: the database exists and is ours
        } catch (SQLException e) {
            closePool();
            if (causeCode(e) == ErrorCode.DATABASE_ALREADY_OPEN_1) {
                throw new IllegalStateException(
                        "The " + description
                                + " is in use by another process; stop that process or choose another data directory",
                        e);
            }
            throw new IllegalStateException("Cannot open the " + description + ": " + e.getMessage(), e);
        }
    }

    private static int causeCode(SQLException e) {
        for (Throwable t = e; t != null; t = t.getCause()) {
            if (t instanceof SQLException sql && sql.getErrorCode() != 0) {
                return sql.getErrorCode();
            }
        }
        return 0;
    }

    @Override
    public void close() {
        try (Connection connection = pool.getConnection();
                Statement statement = connection.createStatement()) {
            statement.execute("SHUTDOWN");
        } catch (SQLException e) {
            // Already shut down or unreachable: nothing left to flush.
        } finally {
            closePool();
        }
    }

    private void closePool() {
        try {
            pool.close();
        } catch (SQLException e) {
            throw new IllegalStateException("Cannot close the connection pool of the " + description, e);
        }
    }
}
