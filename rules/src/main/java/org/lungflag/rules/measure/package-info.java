/**
 * The measurement model: quantity kinds with canonical units, and the normalized facts ({@link
 * org.lungflag.rules.measure.Measurement}, {@link org.lungflag.rules.measure.SupportState}, {@link
 * org.lungflag.rules.measure.PositionState}) that flow into a patient's timeline. No FHIR types: the service
 * converts FHIR to these at its edge.
 */
package org.lungflag.rules.measure;
