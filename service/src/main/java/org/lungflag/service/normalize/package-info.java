/**
 * Normalization at the edge: FHIR Observations become quantity kinds with values in canonical units, specimen
 * kind, role and clinical time, or are refused with a data-quality reason. Plain Java classes here are shared by
 * the live service and replay.
 */
package org.lungflag.service.normalize;
