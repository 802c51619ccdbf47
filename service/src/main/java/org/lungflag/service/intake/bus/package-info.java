/**
 * Integration-bus intake (Kafka), off by default ({@code lungflag.intake.bus.enabled}): FHIR R4 Observations as
 * JSON from one topic keyed by patient id, recorded in the durable inbox (channel BUS) before their offsets are
 * committed, then normalized and evaluated on the same path as the rest-hook. README.md "Integration-bus intake"
 * is the topic contract.
 */
package org.lungflag.service.intake.bus;
