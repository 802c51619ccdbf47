package org.lungflag.service.security;

import java.util.ArrayList;
import java.util.Collection;
import java.util.List;
import java.util.Map;
import org.springframework.core.convert.converter.Converter;
import org.springframework.security.authentication.AbstractAuthenticationToken;
import org.springframework.security.core.GrantedAuthority;
import org.springframework.security.core.authority.SimpleGrantedAuthority;
import org.springframework.security.oauth2.core.DelegatingOAuth2TokenValidator;
import org.springframework.security.oauth2.core.OAuth2Error;
import org.springframework.security.oauth2.core.OAuth2TokenValidator;
import org.springframework.security.oauth2.core.OAuth2TokenValidatorResult;
import org.springframework.security.oauth2.jwt.Jwt;
import org.springframework.security.oauth2.jwt.JwtDecoder;
import org.springframework.security.oauth2.jwt.JwtValidators;
import org.springframework.security.oauth2.jwt.NimbusJwtDecoder;
import org.springframework.security.oauth2.server.resource.authentication.JwtAuthenticationToken;
import org.springframework.stereotype.Component;

/**
 * The OIDC resource server's pieces: a JWT decoder for the configured issuer or key set (signature, expiry, issuer
 * and optionally audience checked) and the mapping of a configurable roles claim to Lungflag's roles.
 */
@Component
class OidcSupport {

    JwtDecoder decoder(SecurityProperties.Oidc oidc) {
        boolean hasIssuer = oidc.issuerUri() != null && !oidc.issuerUri().isBlank();
        boolean hasKeys = oidc.jwkSetUri() != null && !oidc.jwkSetUri().isBlank();
        if (!hasIssuer && !hasKeys) {
            throw new IllegalArgumentException("lungflag.security.mode=oidc needs lungflag.security.oidc.issuer-uri"
                    + " (LUNGFLAG_SECURITY_OIDC_ISSUER_URI) or lungflag.security.oidc.jwk-set-uri");
        }
        NimbusJwtDecoder decoder = hasKeys
                ? NimbusJwtDecoder.withJwkSetUri(oidc.jwkSetUri()).build()
                : NimbusJwtDecoder.withIssuerLocation(oidc.issuerUri()).build();
        List<OAuth2TokenValidator<Jwt>> validators = new ArrayList<>();
        validators.add(
                hasIssuer ? JwtValidators.createDefaultWithIssuer(oidc.issuerUri()) : JwtValidators.createDefault());
        if (oidc.audience() != null && !oidc.audience().isBlank()) {
            validators.add(jwt -> jwt.getAudience() != null && jwt.getAudience().contains(oidc.audience())
                    ? OAuth2TokenValidatorResult.success()
                    : OAuth2TokenValidatorResult.failure(
                            new OAuth2Error("invalid_token", "The token is not meant for this audience.", null)));
        }
        decoder.setJwtValidator(new DelegatingOAuth2TokenValidator<>(validators));
        return decoder;
    }

    Converter<Jwt, AbstractAuthenticationToken> converter(SecurityProperties.Oidc oidc) {
        return jwt -> new JwtAuthenticationToken(jwt, authorities(jwt.getClaims(), oidc), jwt.getSubject());
    }

    /** The Lungflag roles named in the roles claim; unknown values grant nothing. */
    static Collection<GrantedAuthority> authorities(Map<String, Object> claims, SecurityProperties.Oidc oidc) {
        List<GrantedAuthority> out = new ArrayList<>();
        for (String value : values(claims, oidc.rolesClaim())) {
            if (value.equals(oidc.adminRole())) {
                out.add(new SimpleGrantedAuthority(Role.ADMIN.authority()));
            } else if (value.equals(oidc.auditorRole())) {
                out.add(new SimpleGrantedAuthority(Role.AUDITOR.authority()));
            }
        }
        return out;
    }

    static List<String> values(Map<String, Object> claims, String path) {
        Object current = claims;
        for (String part : path.split("\\.")) {
            if (!(current instanceof Map<?, ?> map)) {
                return List.of();
            }
            current = map.get(part);
        }
        if (current instanceof String s) {
            return List.of(s.trim().split("\\s+"));
        }
        if (current instanceof Collection<?> c) {
            return c.stream()
                    .filter(String.class::isInstance)
                    .map(String.class::cast)
                    .toList();
        }
        return List.of();
    }
}
