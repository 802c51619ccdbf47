package org.lungflag.service.intake;

import jakarta.servlet.FilterChain;
import jakarta.servlet.ServletException;
import jakarta.servlet.http.HttpServletRequest;
import jakarta.servlet.http.HttpServletResponse;
import java.io.IOException;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;
import org.springframework.web.filter.OncePerRequestFilter;

/**
 * Refuses every rest-hook request without the right bearer token (401) before anything is read or stored. It is
 * mapped to the hook servlet by name, not by a path test of its own: the container's mapping decides which requests
 * reach the hook, and each of them passes here. The comparison is constant-time; neither the expected nor the
 * offered token is logged.
 */
public class HookAuthenticationFilter extends OncePerRequestFilter {

    private static final Logger log = LoggerFactory.getLogger(HookAuthenticationFilter.class);

    private final HookToken token;

    public HookAuthenticationFilter(HookToken token) {
        this.token = token;
    }

    @Override
    protected void doFilterInternal(HttpServletRequest request, HttpServletResponse response, FilterChain chain)
            throws ServletException, IOException {
        if (!token.matches(request.getHeader("Authorization"))) {
            log.warn("refused a rest-hook call without a valid bearer token from {}", request.getRemoteAddr());
            response.setStatus(HttpServletResponse.SC_UNAUTHORIZED);
            response.setHeader("WWW-Authenticate", "Bearer realm=\"lungflag-hook\"");
            response.setContentType("application/fhir+json");
            response.getWriter()
                    .write(OperationOutcomes.json(
                            "error", "security", "The rest-hook call needs the bearer token configured for Lungflag."));
            return;
        }
        chain.doFilter(request, response);
    }
}
