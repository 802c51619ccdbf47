package org.lungflag.service.testsupport;

import java.util.Map;
import java.util.UUID;
import org.flywaydb.core.Flyway;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.jdbc.datasource.SingleConnectionDataSource;

/**
 * The plans H2 chooses for the audit store's statements: an in-memory H2 database in the service's own mode (the
 * embedded default's settings), migrated by Flyway with the service's migrations, asked to EXPLAIN a statement.
 * H2 names the index it reads in a comment ({@code public.intake_inbox_pending: status IN(...)}), or {@code
 * tableScan}, or the primary key when it walks every row in id order.
 */
public final class H2QueryPlans implements AutoCloseable {

    private final SingleConnectionDataSource dataSource;
    private final JdbcClient jdbc;

    private H2QueryPlans(SingleConnectionDataSource dataSource) {
        this.dataSource = dataSource;
        this.jdbc = JdbcClient.create(dataSource);
    }

    /** A fresh database holding the service's schema. */
    public static H2QueryPlans migrated() {
        SingleConnectionDataSource ds = new SingleConnectionDataSource(
                "jdbc:h2:mem:plans-" + UUID.randomUUID()
                        + ";MODE=PostgreSQL;DATABASE_TO_LOWER=TRUE;DEFAULT_NULL_ORDERING=HIGH",
                "sa",
                "",
                true);
        Flyway.configure()
                .dataSource(ds)
                .locations("classpath:db/migration")
                .load()
                .migrate();
        return new H2QueryPlans(ds);
    }

    /**
     * H2's plan for {@code sql} with these named parameters, on one line. A row-locking clause is left out: H2 plans
     * the rows to read the same way and does not EXPLAIN it.
     */
    public String plan(String sql, Map<String, ?> params) {
        String statement = "EXPLAIN " + sql.replace("FOR UPDATE SKIP LOCKED", "");
        return jdbc.sql(statement).params(params).query(String.class).single().replaceAll("\\s+", " ");
    }

    @Override
    public void close() {
        dataSource.destroy();
    }
}
