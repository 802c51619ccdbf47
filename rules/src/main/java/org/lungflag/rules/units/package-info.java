/**
 * Units and normalization: {@link org.lungflag.rules.units.UnitConverter} (UCUM conversion with the UCUM reference
 * library), {@link org.lungflag.rules.units.PlausibilityRanges} (configurable physiological gates) and {@link
 * org.lungflag.rules.units.MeasurementNormalizer}, the single path from a received value ({@link
 * org.lungflag.rules.units.RawMeasurement}) to a canonical {@link org.lungflag.rules.measure.Measurement} or a
 * refusal with a {@link org.lungflag.rules.quality.DataQualityReason}. Live intake and replay share it.
 */
package org.lungflag.rules.units;
