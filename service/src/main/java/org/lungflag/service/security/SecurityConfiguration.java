package org.lungflag.service.security;

import jakarta.servlet.http.HttpServletRequest;
import java.time.Clock;
import java.util.LinkedHashMap;
import org.springframework.boot.web.servlet.FilterRegistrationBean;
import org.springframework.context.annotation.Bean;
import org.springframework.context.annotation.Configuration;
import org.springframework.http.HttpMethod;
import org.springframework.http.HttpStatus;
import org.springframework.jdbc.core.simple.JdbcClient;
import org.springframework.security.access.hierarchicalroles.RoleHierarchy;
import org.springframework.security.access.hierarchicalroles.RoleHierarchyImpl;
import org.springframework.security.config.Customizer;
import org.springframework.security.config.annotation.web.builders.HttpSecurity;
import org.springframework.security.config.annotation.web.configuration.EnableWebSecurity;
import org.springframework.security.config.http.SessionCreationPolicy;
import org.springframework.security.crypto.password.PasswordEncoder;
import org.springframework.security.oauth2.jwt.JwtDecoder;
import org.springframework.security.web.AuthenticationEntryPoint;
import org.springframework.security.web.SecurityFilterChain;
import org.springframework.security.web.authentication.DelegatingAuthenticationEntryPoint;
import org.springframework.security.web.authentication.LoginUrlAuthenticationEntryPoint;
import org.springframework.security.web.header.writers.ReferrerPolicyHeaderWriter;
import org.springframework.security.web.util.matcher.RequestMatcher;

/**
 * The security chain. Paths and who may use them:
 *
 * <ul>
 *   <li>{@code /fhir-hook/**}: the FHIR server's rest-hook, checked by its own bearer-token filter before this chain
 *       (no login, no CSRF, no session);
 *   <li>{@code /actuator/health/**}, {@code /actuator/info}: open for probes (status only; details need a login);
 *   <li>{@code /actuator/**} (Prometheus metrics): admin;
 *   <li>{@code PUT /api/v1/rules/{id}/mode}, {@code POST /console/rules/{id}/mode}: admin;
 *   <li>{@code /api/**}, {@code /v3/api-docs}, {@code /console/**}: auditor (and admin);
 *   <li>the login page and static assets: open; everything else: refused.
 * </ul>
 *
 * Local mode: form login (session, 30 min idle timeout, CSRF on every form) and HTTP Basic for API clients. OIDC
 * mode: a JWT bearer token on every request, roles from a configurable claim, no session.
 */
@Configuration(proxyBeanMethods = false)
@EnableWebSecurity
class SecurityConfiguration {

    /** Content-Security-Policy: only this origin's scripts, styles and images; no framing. */
    static final String CSP = "default-src 'self'; script-src 'self'; style-src 'self'; img-src 'self' data:;"
            + " object-src 'none'; base-uri 'self'; form-action 'self'; frame-ancestors 'none'";

    @Bean
    static RoleHierarchy roleHierarchy() {
        return RoleHierarchyImpl.fromHierarchy(Role.ADMIN.authority() + " > " + Role.AUDITOR.authority());
    }

    @Bean
    PasswordEncoder passwordEncoder() {
        return LocalAccounts.passwordEncoder();
    }

    @Bean
    LocalAccounts localAccounts(JdbcClient jdbc, SecurityProperties properties, PasswordEncoder encoder, Clock clock) {
        return new LocalAccounts(jdbc, properties, encoder, clock);
    }

    @Bean
    FilterRegistrationBean<RequestSizeFilter> requestSizeFilter(SecurityProperties properties) {
        FilterRegistrationBean<RequestSizeFilter> registration =
                new FilterRegistrationBean<>(new RequestSizeFilter(properties.maxApiBodyBytes()));
        registration.addUrlPatterns("/api/*", "/console/*");
        // after the security chain (order -100): an unauthenticated request is refused before its body is read
        registration.setOrder(0);
        return registration;
    }

    static boolean isApi(HttpServletRequest r) {
        String path = path(r);
        return path.startsWith("/api/") || path.startsWith("/v3/api-docs") || path.startsWith("/actuator");
    }

    static String path(HttpServletRequest r) {
        return r.getRequestURI().substring(r.getContextPath().length());
    }

    static boolean isHook(HttpServletRequest r) {
        String p = path(r);
        return p.equals("/fhir-hook") || p.startsWith("/fhir-hook/");
    }

    /**
     * The rest-hook's own chain, ahead of the main one: its caller is the FHIR server, authenticated by the hook
     * token filter before any chain runs, so it needs no session, CSRF token, saved request, anonymous user or logout
     * here. A lean chain matters because the hook takes every notification (the load benchmark found the full chain
     * to be a quarter of the hook's CPU time).
     */
    @Bean
    @org.springframework.core.annotation.Order(1)
    SecurityFilterChain hookFilterChain(HttpSecurity http) throws Exception {
        http.securityMatcher(SecurityConfiguration::isHook)
                .authorizeHttpRequests(a -> a.anyRequest().permitAll())
                .csrf(c -> c.disable())
                .requestCache(c -> c.disable())
                .anonymous(a -> a.disable())
                .logout(l -> l.disable())
                .servletApi(s -> s.disable())
                .sessionManagement(s -> s.sessionCreationPolicy(SessionCreationPolicy.STATELESS));
        return http.build();
    }

    @Bean
    @org.springframework.core.annotation.Order(2)
    SecurityFilterChain securityFilterChain(
            HttpSecurity http, SecurityProperties properties, LocalAccounts accounts, OidcSupport oidc)
            throws Exception {
        boolean local = properties.mode() == SecurityProperties.Mode.LOCAL;
        RequestMatcher api = SecurityConfiguration::isApi;
        RequestMatcher hook = r -> {
            String p = path(r);
            return p.equals("/fhir-hook") || p.startsWith("/fhir-hook/");
        };
        // Cross-site request forgery rides on ambient credentials (the console's session cookie). An API request
        // that authenticates with a header, or carries no session at all, has none: it needs no CSRF token (and an
        // API request without credentials then gets its 401, not a 403).
        RequestMatcher headerAuthenticatedApi =
                r -> isApi(r) && (r.getHeader("Authorization") != null || r.getRequestedSessionId() == null);

        http.authorizeHttpRequests(a -> a.requestMatchers(hook)
                .permitAll()
                .requestMatchers("/actuator/health", "/actuator/health/**", "/actuator/info")
                .permitAll()
                .requestMatchers("/actuator/**")
                .hasRole(Role.ADMIN.name())
                .requestMatchers("/login", "/console/assets/**", "/webjars/**", "/error", "/favicon.ico")
                .permitAll()
                .requestMatchers(HttpMethod.PUT, "/api/v1/rules/*/mode")
                .hasRole(Role.ADMIN.name())
                .requestMatchers(HttpMethod.POST, "/console/rules/*/mode")
                .hasRole(Role.ADMIN.name())
                .requestMatchers("/", "/api/**", "/v3/api-docs", "/v3/api-docs/**", "/console", "/console/**")
                .hasRole(Role.AUDITOR.name())
                .anyRequest()
                .denyAll());
        http.csrf(c -> c.ignoringRequestMatchers(hook, headerAuthenticatedApi));
        http.headers(h -> h.contentSecurityPolicy(csp -> csp.policyDirectives(CSP))
                .referrerPolicy(r -> r.policy(ReferrerPolicyHeaderWriter.ReferrerPolicy.SAME_ORIGIN))
                .permissionsPolicyHeader(p -> p.policy("camera=(), microphone=(), geolocation=()")));

        LinkedHashMap<RequestMatcher, AuthenticationEntryPoint> entryPoints = new LinkedHashMap<>();
        if (local) {
            http.userDetailsService(accounts);
            http.formLogin(f ->
                    f.loginPage("/login").defaultSuccessUrl("/console", false).permitAll());
            http.logout(l -> l.logoutUrl("/logout").logoutSuccessUrl("/login?signed-out"));
            http.httpBasic(Customizer.withDefaults());
            entryPoints.put(api, new JsonEntryPoint("Basic realm=\"lungflag\""));
            DelegatingAuthenticationEntryPoint entry = new DelegatingAuthenticationEntryPoint(entryPoints);
            entry.setDefaultEntryPoint(new LoginUrlAuthenticationEntryPoint("/login"));
            http.exceptionHandling(e -> e.authenticationEntryPoint(entry).accessDeniedHandler(new JsonAccessDenied()));
        } else {
            JwtDecoder decoder = oidc.decoder(properties.oidc());
            http.oauth2ResourceServer(o -> o.jwt(
                            j -> j.decoder(decoder).jwtAuthenticationConverter(oidc.converter(properties.oidc())))
                    .authenticationEntryPoint(new JsonEntryPoint("Bearer")));
            http.sessionManagement(s -> s.sessionCreationPolicy(SessionCreationPolicy.STATELESS));
            http.exceptionHandling(e -> e.authenticationEntryPoint(new JsonEntryPoint("Bearer"))
                    .accessDeniedHandler(new JsonAccessDenied()));
        }
        return http.build();
    }

    /** 401 with a short JSON body and the challenge; a browser asking for a console page is sent to the login. */
    static final class JsonEntryPoint implements AuthenticationEntryPoint {
        private final String challenge;

        JsonEntryPoint(String challenge) {
            this.challenge = challenge;
        }

        @Override
        public void commence(
                HttpServletRequest request,
                jakarta.servlet.http.HttpServletResponse response,
                org.springframework.security.core.AuthenticationException e)
                throws java.io.IOException {
            response.setStatus(HttpStatus.UNAUTHORIZED.value());
            response.setHeader("WWW-Authenticate", challenge);
            response.setContentType("application/json");
            response.getWriter()
                    .write("{\"status\":401,\"error\":\"unauthorized\",\"message\":\"This needs a login with the"
                            + " auditor or admin role.\"}");
        }
    }

    /** 403 for a signed-in user whose role does not allow the request. */
    static final class JsonAccessDenied implements org.springframework.security.web.access.AccessDeniedHandler {
        @Override
        public void handle(
                HttpServletRequest request,
                jakarta.servlet.http.HttpServletResponse response,
                org.springframework.security.access.AccessDeniedException e)
                throws java.io.IOException {
            response.setStatus(HttpStatus.FORBIDDEN.value());
            if (isApi(request)) {
                response.setContentType("application/json");
                response.getWriter()
                        .write("{\"status\":403,\"error\":\"forbidden\",\"message\":\"Your role does not allow this"
                                + " (switching a rule needs the admin role; a form needs its CSRF token).\"}");
            } else {
                response.setContentType("text/html;charset=UTF-8");
                response.getWriter()
                        .write("<!doctype html><html lang=\"en\"><head><title>Not allowed - Lungflag</title></head>"
                                + "<body><main><h1>Not allowed</h1><p>Your role does not allow this, or the form"
                                + " was too old (sign in again and retry).</p><p><a href=\"/console\">Back to the"
                                + " console</a></p></main></body></html>");
            }
        }
    }
}
