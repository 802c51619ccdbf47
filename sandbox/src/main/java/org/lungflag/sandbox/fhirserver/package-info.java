/**
 * The embedded FHIR server: HAPI's JPA server (FHIR R4, H2, rest-hook subscriptions) in its own Spring context behind
 * an embedded Tomcat. {@link org.lungflag.sandbox.fhirserver.SandboxFhirServer} starts one (or hands out the one
 * shared by a test JVM), {@link org.lungflag.sandbox.fhirserver.SandboxOptions} says how; the HAPI wiring and the
 * database stay package-private.
 */
package org.lungflag.sandbox.fhirserver;
