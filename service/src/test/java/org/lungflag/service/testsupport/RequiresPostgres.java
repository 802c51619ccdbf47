package org.lungflag.service.testsupport;

import java.lang.annotation.ElementType;
import java.lang.annotation.Retention;
import java.lang.annotation.RetentionPolicy;
import java.lang.annotation.Target;
import org.junit.jupiter.api.extension.ExtendWith;

/**
 * A test that needs the PostgreSQL at {@code 127.0.0.1:5432} (database {@code test}, trust auth; override with
 * LUNGFLAG_TEST_PG_URL). On a machine without it the test is skipped; under {@code CI=true} it runs regardless
 * and fails with a clear message, so CI can never pass by skipping it.
 */
@Target(ElementType.TYPE)
@Retention(RetentionPolicy.RUNTIME)
@ExtendWith(PostgresCondition.class)
public @interface RequiresPostgres {}
