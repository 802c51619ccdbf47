package org.lungflag.service.security;

import jakarta.servlet.DispatcherType;
import jakarta.servlet.FilterChain;
import jakarta.servlet.ServletException;
import jakarta.servlet.ServletRequest;
import jakarta.servlet.ServletResponse;
import jakarta.servlet.http.HttpServletRequest;
import java.io.IOException;
import java.time.Clock;
import java.util.EnumSet;
import java.util.LinkedHashMap;
import java.util.stream.Collectors;
import org.lungflag.service.intake.HookServlet;
import org.springframework.beans.factory.config.BeanPostProcessor;
import org.springframework.boot.web.servlet.DelegatingFilterProxyRegistrationBean;
import org.springframework.boot.web.servlet.FilterRegistrationBean;
import org.springframework.context.ApplicationContext;
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
import org.springframework.security.web.context.AbstractSecurityWebApplicationInitializer;
import org.springframework.security.web.header.writers.ReferrerPolicyHeaderWriter;
import org.springframework.security.web.util.matcher.RequestMatcher;
import org.springframework.web.context.WebApplicationContext;
import org.springframework.web.filter.DelegatingFilterProxy;

/**
 * The security chain. Paths and who may use them:
 *
 * <ul>
 *   <li>{@code /fhir-hook/**}: the FHIR server's rest-hook, a servlet of its own outside this chain, checked by its
 *       own bearer-token filter (no login, no CSRF, no session);
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

    /** The bean name of Spring Security's filter chain (and of Boot's registration of it). */
    private static final String SECURITY_FILTER = AbstractSecurityWebApplicationInitializer.DEFAULT_FILTER_NAME;

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

    /**
     * Spring Security's filter in front of every servlet except the rest-hook's ({@link HookServlet}). Boot registers
     * the filter for every path; that registration is switched off here and replaced by {@link
     * SecurityFilterExceptHook} with the same order and dispatcher types. The exception is by servlet: the container
     * decides which requests go to the hook servlet, which serves the hook only and checks its own token, so no path
     * pattern of ours can let another request past. The load benchmark found the chain, with the per-request handler
     * introspection Spring Security adds under Spring MVC, to be a quarter of the hook's CPU time.
     */
    @Bean
    static BeanPostProcessor bootSecurityFilterRegistrationOff() {
        return new BeanPostProcessor() {
            @Override
            public Object postProcessBeforeInitialization(Object bean, String beanName) {
                if (bean instanceof DelegatingFilterProxyRegistrationBean registration
                        && registration.getFilterName().equals(SECURITY_FILTER)) {
                    registration.setEnabled(false);
                }
                return bean;
            }
        };
    }

    @Bean
    FilterRegistrationBean<SecurityFilterExceptHook> securityFilterExceptHook(
            org.springframework.boot.autoconfigure.security.SecurityProperties boot, ApplicationContext context) {
        FilterRegistrationBean<SecurityFilterExceptHook> registration = new FilterRegistrationBean<>(
                new SecurityFilterExceptHook((WebApplicationContext) context, HookServlet.SERVLET_NAME));
        registration.setName("securityFilterExceptHook");
        registration.setOrder(boot.getFilter().getOrder());
        registration.setDispatcherTypes(boot.getFilter().getDispatcherTypes().stream()
                .map(t -> DispatcherType.valueOf(t.name()))
                .collect(Collectors.toCollection(() -> EnumSet.noneOf(DispatcherType.class))));
        return registration;
    }

    /** Passes a request the container routed to the hook servlet straight on; every other one goes through the chain. */
    static final class SecurityFilterExceptHook extends DelegatingFilterProxy {
        private final String hookServlet;

        SecurityFilterExceptHook(WebApplicationContext context, String hookServlet) {
            super(SECURITY_FILTER, context);
            this.hookServlet = hookServlet;
        }

        @Override
        protected void initFilterBean() {
            // the chain is looked up on the first request, as Boot's own registration does
        }

        @Override
        public void doFilter(ServletRequest request, ServletResponse response, FilterChain chain)
                throws ServletException, IOException {
            if (request.getDispatcherType() == DispatcherType.REQUEST
                    && request instanceof HttpServletRequest http
                    && hookServlet.equals(http.getHttpServletMapping().getServletName())) {
                chain.doFilter(request, response);
            } else {
                super.doFilter(request, response, chain);
            }
        }
    }

    @Bean
    SecurityFilterChain securityFilterChain(
            HttpSecurity http, SecurityProperties properties, LocalAccounts accounts, OidcSupport oidc)
            throws Exception {
        boolean local = properties.mode() == SecurityProperties.Mode.LOCAL;
        RequestMatcher api = SecurityConfiguration::isApi;
        // Cross-site request forgery rides on ambient credentials (the console's session cookie). An API request
        // that authenticates with a header, or carries no session at all, has none: it needs no CSRF token (and an
        // API request without credentials then gets its 401, not a 403).
        RequestMatcher headerAuthenticatedApi =
                r -> isApi(r) && (r.getHeader("Authorization") != null || r.getRequestedSessionId() == null);

        http.authorizeHttpRequests(a -> a.requestMatchers("/actuator/health", "/actuator/health/**", "/actuator/info")
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
        http.csrf(c -> c.ignoringRequestMatchers(headerAuthenticatedApi));
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
