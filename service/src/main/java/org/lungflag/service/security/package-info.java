/**
 * Who may see what: Spring Security for the console, the audit API and the actuator (roles auditor and admin; local
 * accounts or an OIDC resource server), request size limits, and the security headers. The rest-hook keeps its own
 * bearer-token check ({@code intake.HookAuthenticationFilter}), which runs before this chain.
 */
package org.lungflag.service.security;
