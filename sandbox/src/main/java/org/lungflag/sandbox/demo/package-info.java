/**
 * The one-command demo ({@code java -jar sandbox/target/lungflag-sandbox-exec.jar demo}): {@link
 * org.lungflag.sandbox.demo.DemoRun} starts the embedded FHIR server, the service jar as a child JVM on H2, plays
 * the invented scenario and reports the Flags written.
 */
package org.lungflag.sandbox.demo;
