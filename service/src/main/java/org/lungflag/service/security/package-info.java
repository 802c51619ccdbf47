/**
 * Who may see what: Spring Security for the console, the audit API and the actuator (roles auditor and admin; local
 * accounts or an OIDC resource server), request size limits, and the security headers. The rest-hook is a servlet of
 * its own outside this chain, with its own bearer-token check ({@code intake.HookAuthenticationFilter}); the chain's
 * filter leaves out that servlet and no other ({@code SecurityConfiguration.SecurityFilterExceptHook}).
 */
package org.lungflag.service.security;
