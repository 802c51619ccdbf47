package org.lungflag.service.normalize;

import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SpecimenKind;
import org.lungflag.rules.measure.ValueRole;

/**
 * What one input code means: the quantity kind, whether it is a setting or a measurement, and the specimen its
 * LOINC system axis implies ({@link SpecimenKind#NOT_APPLICABLE} for non-blood values).
 *
 * @param source where the code and its meaning were checked (clinical-reference §11 abbreviations)
 */
public record CodeMapping(QuantityKind kind, ValueRole role, SpecimenKind specimen, String source) {}
