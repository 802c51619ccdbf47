package org.lungflag.rules.measure;

/** A value and its UCUM unit exactly as received, kept so the audit can show what was converted. */
public record OriginalQuantity(double value, String unit) {}
