/**
 * The sandbox's command line: {@link org.lungflag.sandbox.cli.SandboxCli} dispatches to one class per sub-command
 * ({@code serve} runs the FHIR server in the foreground). Exit codes: 0 done, 1 failed, 2 bad arguments.
 */
package org.lungflag.sandbox.cli;
