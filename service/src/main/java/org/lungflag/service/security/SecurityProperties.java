package org.lungflag.service.security;

import java.util.List;
import org.springframework.boot.context.properties.ConfigurationProperties;
import org.springframework.boot.context.properties.bind.DefaultValue;

/**
 * Who may use the console and the audit API ({@code lungflag.security.*}).
 *
 * @param mode {@code local} (embedded default: form login for the console, HTTP Basic for API clients, accounts
 *     stored in the audit database or listed below) or {@code oidc} (production: every request carries an OIDC
 *     access token, a JWT, checked as an OAuth 2.0 resource server; roles come from {@code oidc.roles-claim})
 * @param adminUser the local administrator's user name
 * @param adminPassword the local administrator's password; when blank, one is generated on the very first start
 *     and printed once to the console (standard output), never logged and never printed again
 * @param accounts further local accounts (name, password, role), e.g. for tests or a small site; a password that
 *     starts with {@code {bcrypt}} is taken as a hash
 * @param oidc the resource server's settings in {@code oidc} mode
 * @param maxApiBodyBytes larger request bodies to {@code /api/**} and the console are refused with 413
 */
@ConfigurationProperties("lungflag.security")
public record SecurityProperties(
        @DefaultValue("local") Mode mode,
        @DefaultValue("admin") String adminUser,
        String adminPassword,
        List<Account> accounts,
        @DefaultValue Oidc oidc,
        @DefaultValue("1048576") long maxApiBodyBytes) {

    public SecurityProperties {
        accounts = accounts == null ? List.of() : List.copyOf(accounts);
    }

    /** How people and API clients sign in. */
    public enum Mode {
        LOCAL,
        OIDC
    }

    /** A configured local account. */
    public record Account(String name, String password, Role role) {}

    /**
     * The OIDC resource server.
     *
     * @param issuerUri the issuer; its discovery document gives the signing keys (and {@code iss} is checked)
     * @param jwkSetUri the signing keys directly, when the issuer has no discovery document reachable from here
     * @param audience when set, the token's {@code aud} must contain it
     * @param rolesClaim the claim holding the roles, a dotted path into nested objects allowed (e.g. {@code
     *     realm_access.roles}); a list of strings or one space-separated string
     * @param auditorRole the value in that claim that grants the auditor role
     * @param adminRole the value that grants the admin role
     */
    public record Oidc(
            String issuerUri,
            String jwkSetUri,
            String audience,
            @DefaultValue("roles") String rolesClaim,
            @DefaultValue("lungflag-auditor") String auditorRole,
            @DefaultValue("lungflag-admin") String adminRole) {}
}
