package org.lungflag.service.testsupport;

import java.sql.Connection;
import java.sql.DriverManager;
import java.sql.SQLException;
import org.junit.jupiter.api.extension.ConditionEvaluationResult;
import org.junit.jupiter.api.extension.ExecutionCondition;
import org.junit.jupiter.api.extension.ExtensionContext;

/** See {@link RequiresPostgres}. */
public final class PostgresCondition implements ExecutionCondition {

    public static final String DEFAULT_URL = "jdbc:postgresql://127.0.0.1:5432/test";

    public static String url() {
        String url = System.getenv("LUNGFLAG_TEST_PG_URL");
        return url == null || url.isBlank() ? DEFAULT_URL : url;
    }

    public static String user() {
        String user = System.getenv("LUNGFLAG_TEST_PG_USER");
        return user == null || user.isBlank() ? "postgres" : user;
    }

    public static boolean reachable() {
        try (Connection c = DriverManager.getConnection(url(), user(), "")) {
            return c.isValid(2);
        } catch (SQLException e) {
            return false;
        }
    }

    static boolean underCi() {
        return "true".equalsIgnoreCase(System.getenv("CI"));
    }

    @Override
    public ConditionEvaluationResult evaluateExecutionCondition(ExtensionContext context) {
        if (reachable()) {
            return ConditionEvaluationResult.enabled("PostgreSQL is reachable at " + url());
        }
        if (underCi()) {
            // run, and let the test fail loudly: CI must not pass by skipping the PostgreSQL tests
            return ConditionEvaluationResult.enabled("CI=true: PostgreSQL is required at " + url());
        }
        return ConditionEvaluationResult.disabled("no PostgreSQL at " + url() + " (these tests run in CI)");
    }
}
