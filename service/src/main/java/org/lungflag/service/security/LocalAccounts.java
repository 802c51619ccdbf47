package org.lungflag.service.security;

import java.io.PrintStream;
import java.security.SecureRandom;
import java.sql.Timestamp;
import java.time.Clock;
import java.util.Base64;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;
import org.springframework.beans.factory.SmartInitializingSingleton;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.security.core.authority.SimpleGrantedAuthority;
import org.springframework.security.core.userdetails.User;
import org.springframework.security.core.userdetails.UserDetails;
import org.springframework.security.core.userdetails.UserDetailsService;
import org.springframework.security.core.userdetails.UsernameNotFoundException;
import org.springframework.security.crypto.bcrypt.BCryptPasswordEncoder;
import org.springframework.security.crypto.password.PasswordEncoder;

/**
 * The local accounts of the embedded default: the administrator (password from {@code lungflag.security.admin-password}
 * or, on the very first start, generated and printed once to standard output; only its BCrypt hash is stored) and
 * the accounts listed in {@code lungflag.security.accounts}. No password or hash is ever logged.
 */
public class LocalAccounts implements UserDetailsService, SmartInitializingSingleton {

    private static final Logger log = LoggerFactory.getLogger(LocalAccounts.class);

    private final JdbcClient jdbc;
    private final SecurityProperties properties;
    private final PasswordEncoder encoder;
    private final Clock clock;
    private final PrintStream console;
    private final Map<String, UserDetails> configured = new LinkedHashMap<>();

    LocalAccounts(JdbcClient jdbc, SecurityProperties properties, PasswordEncoder encoder, Clock clock) {
        this(jdbc, properties, encoder, clock, System.out);
    }

    LocalAccounts(
            JdbcClient jdbc, SecurityProperties properties, PasswordEncoder encoder, Clock clock, PrintStream console) {
        this.jdbc = jdbc;
        this.properties = properties;
        this.encoder = encoder;
        this.clock = clock;
        this.console = console;
        for (SecurityProperties.Account a : properties.accounts()) {
            if (a.name() == null
                    || a.name().isBlank()
                    || a.password() == null
                    || a.password().isBlank()) {
                throw new IllegalArgumentException(
                        "lungflag.security.accounts: every account needs a name and a password");
            }
            if (a.role() == null) {
                throw new IllegalArgumentException(
                        "lungflag.security.accounts: account " + a.name() + " needs a role (auditor or admin)");
            }
            String hash = a.password().startsWith("{bcrypt}")
                    ? a.password().substring("{bcrypt}".length())
                    : encoder.encode(a.password());
            configured.put(a.name(), user(a.name(), hash, a.role()));
        }
    }

    /** BCrypt at the library's default strength (10). */
    static PasswordEncoder passwordEncoder() {
        return new BCryptPasswordEncoder();
    }

    @Override
    public void afterSingletonsInstantiated() {
        ensureAdmin();
    }

    /** Creates or updates the administrator account; prints a generated password once. */
    void ensureAdmin() {
        String name = properties.adminUser();
        String given = properties.adminPassword();
        Timestamp now = Timestamp.from(clock.instant());
        if (given != null && !given.isBlank()) {
            String hash = encoder.encode(given);
            int updated = jdbc.sql("UPDATE local_account SET password_hash = :h, role = 'ADMIN', origin = 'SETTING',"
                            + " updated_at = :now WHERE username = :u")
                    .param("h", hash)
                    .param("now", now)
                    .param("u", name)
                    .update();
            if (updated == 0) {
                insert(name, hash, "SETTING", now);
            }
            log.info("local administrator '{}' takes its password from lungflag.security.admin-password", name);
            return;
        }
        if (stored(name).isPresent()) {
            return;
        }
        String generated = generatePassword();
        if (insert(name, encoder.encode(generated), "GENERATED", now) == 1) {
            // printed, not logged: standard output of this first start is the only place it ever appears
            console.println();
            console.println("==================================================================================");
            console.println(" Lungflag: generated a password for the local administrator '" + name + "':");
            console.println();
            console.println("     " + generated);
            console.println();
            console.println(" It is shown only this once. Keep it safe, or set LUNGFLAG_SECURITY_ADMIN_PASSWORD.");
            console.println("==================================================================================");
            console.println();
            console.flush();
        }
    }

    private int insert(String name, String hash, String origin, Timestamp now) {
        return jdbc.sql("INSERT INTO local_account (username, password_hash, role, origin, created_at, updated_at)"
                        + " VALUES (:u, :h, 'ADMIN', :o, :now, :now) ON CONFLICT DO NOTHING")
                .param("u", name)
                .param("h", hash)
                .param("o", origin)
                .param("now", now)
                .update();
    }

    static String generatePassword() {
        byte[] random = new byte[18];
        new SecureRandom().nextBytes(random);
        return Base64.getUrlEncoder().withoutPadding().encodeToString(random);
    }

    private Optional<UserDetails> stored(String name) {
        return jdbc.sql("SELECT username, password_hash, role FROM local_account WHERE username = :u")
                .param("u", name)
                .query((rs, n) -> user(rs.getString(1), rs.getString(2), Role.valueOf(rs.getString(3))))
                .optional();
    }

    @Override
    public UserDetails loadUserByUsername(String username) {
        UserDetails c = configured.get(username);
        if (c != null) {
            return User.withUserDetails(c).build();
        }
        return stored(username).orElseThrow(() -> new UsernameNotFoundException("no such local account"));
    }

    private static UserDetails user(String name, String hash, Role role) {
        return User.withUsername(name)
                .password(hash)
                .authorities(List.of(new SimpleGrantedAuthority(role.authority())))
                .build();
    }
}
