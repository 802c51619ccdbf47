package org.lungflag.service.security;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import ch.qos.logback.classic.Logger;
import ch.qos.logback.classic.spi.ILoggingEvent;
import ch.qos.logback.core.read.ListAppender;
import java.io.ByteArrayOutputStream;
import java.io.PrintStream;
import java.nio.charset.StandardCharsets;
import java.time.Clock;
import java.util.List;
import java.util.UUID;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.flywaydb.core.Flyway;
import org.h2.jdbcx.JdbcDataSource;
import org.junit.jupiter.api.AfterEach;
import org.junit.jupiter.api.BeforeEach;
import org.junit.jupiter.api.Test;
import org.slf4j.LoggerFactory;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.security.core.userdetails.UsernameNotFoundException;
import org.springframework.security.crypto.password.PasswordEncoder;

/**
 * The local accounts on the real schema (Flyway migrations on an in-memory H2): the administrator's generated
 * password is printed exactly once to standard output, never logged, and only its BCrypt hash is stored; a password
 * from the setting replaces it; configured accounts carry their role.
 */
class LocalAccountsTest {

    private final PasswordEncoder encoder = LocalAccounts.passwordEncoder();
    private JdbcClient jdbc;
    private ListAppender<ILoggingEvent> logs;

    @BeforeEach
    void schema() {
        JdbcDataSource ds = new JdbcDataSource();
        ds.setURL("jdbc:h2:mem:accounts-" + UUID.randomUUID()
                + ";MODE=PostgreSQL;DATABASE_TO_LOWER=TRUE;DB_CLOSE_DELAY=-1");
        Flyway.configure()
                .dataSource(ds)
                .locations("classpath:db/migration")
                .load()
                .migrate();
        jdbc = JdbcClient.create(ds);
        logs = new ListAppender<>();
        logs.start();
        ((Logger) LoggerFactory.getLogger(LocalAccounts.class)).addAppender(logs);
    }

    @AfterEach
    void detach() {
        ((Logger) LoggerFactory.getLogger(LocalAccounts.class)).detachAppender(logs);
    }

    private static SecurityProperties properties(String adminPassword, List<SecurityProperties.Account> accounts) {
        return new SecurityProperties(
                SecurityProperties.Mode.LOCAL,
                "admin",
                adminPassword,
                accounts,
                new SecurityProperties.Oidc(null, null, null, "roles", "a", "b"),
                1024);
    }

    private String start(SecurityProperties p) {
        ByteArrayOutputStream out = new ByteArrayOutputStream();
        LocalAccounts accounts = new LocalAccounts(
                jdbc, p, encoder, Clock.systemUTC(), new PrintStream(out, true, StandardCharsets.UTF_8));
        accounts.ensureAdmin();
        return out.toString(StandardCharsets.UTF_8);
    }

    private LocalAccounts accounts(SecurityProperties p) {
        return new LocalAccounts(jdbc, p, encoder, Clock.systemUTC(), new PrintStream(new ByteArrayOutputStream()));
    }

    @Test
    void aGeneratedAdminPasswordIsPrintedOnceNeverLoggedAndStoredOnlyAsAHash() {
        String first = start(properties(null, List.of()));
        Matcher m = Pattern.compile("\\n\\s{5}(\\S+)\\n").matcher(first);
        assertThat(m.find()).as(first).isTrue();
        String password = m.group(1);
        assertThat(password).hasSizeGreaterThanOrEqualTo(20);
        String hash = jdbc.sql("SELECT password_hash FROM local_account WHERE username = 'admin'")
                .query(String.class)
                .single();
        assertThat(hash).startsWith("$2").doesNotContain(password);
        assertThat(encoder.matches(
                        password,
                        accounts(properties(null, List.of()))
                                .loadUserByUsername("admin")
                                .getPassword()))
                .isTrue();
        // a second start (or a second instance) prints nothing and keeps the same account
        assertThat(start(properties(null, List.of()))).isEmpty();
        assertThat(logs.list)
                .noneSatisfy(e -> assertThat(e.getFormattedMessage()).contains(password));
    }

    @Test
    void aPasswordFromTheSettingReplacesTheGeneratedOne() {
        start(properties(null, List.of()));
        assertThat(start(properties("chosen-by-the-site", List.of()))).isEmpty();
        String hash = accounts(properties(null, List.of()))
                .loadUserByUsername("admin")
                .getPassword();
        assertThat(encoder.matches("chosen-by-the-site", hash)).isTrue();
        assertThat(logs.list)
                .noneSatisfy(e -> assertThat(e.getFormattedMessage()).contains("chosen-by-the-site"));
    }

    @Test
    void configuredAccountsCarryTheirRoleAndUnknownNamesAreRefused() {
        LocalAccounts accounts = accounts(properties(
                "x",
                List.of(
                        new SecurityProperties.Account("quality-1", "pw-1", Role.AUDITOR),
                        new SecurityProperties.Account("it-1", "{bcrypt}" + encoder.encode("pw-2"), Role.ADMIN))));
        var auditor = accounts.loadUserByUsername("quality-1");
        assertThat(auditor.getAuthorities()).extracting(Object::toString).containsExactly("ROLE_AUDITOR");
        assertThat(encoder.matches("pw-1", auditor.getPassword())).isTrue();
        var admin = accounts.loadUserByUsername("it-1");
        assertThat(admin.getAuthorities()).extracting(Object::toString).containsExactly("ROLE_ADMIN");
        assertThat(encoder.matches("pw-2", admin.getPassword())).isTrue();
        assertThatThrownBy(() -> accounts.loadUserByUsername("nobody")).isInstanceOf(UsernameNotFoundException.class);
        assertThatThrownBy(
                        () -> accounts(properties("x", List.of(new SecurityProperties.Account("no-role", "pw", null)))))
                .hasMessageContaining("needs a role");
    }
}
