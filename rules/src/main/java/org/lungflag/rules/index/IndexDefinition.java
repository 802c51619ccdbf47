package org.lungflag.rules.index;

import java.util.List;
import java.util.Objects;

/**
 * A named, versioned index formula: what the service's index catalog shows and what the conformance CodeSystem is
 * checked against.
 *
 * @param code the index it computes
 * @param formula formula id and version, carried by every value it produces
 * @param formulaText the formula as text, with units
 * @param inputs what it reads
 * @param unit UCUM unit of the result ({@link IndexCode#unit()})
 * @param validity when the result is valid, and when it is refused
 * @param source the published source, with the clinical-reference source tag ([PUB-V], [PUB-2], [CP], [MEM]...)
 */
public record IndexDefinition(
        IndexCode code,
        FormulaRef formula,
        String formulaText,
        List<IndexInput> inputs,
        String unit,
        String validity,
        String source) {

    public IndexDefinition {
        Objects.requireNonNull(code, "code");
        Objects.requireNonNull(formula, "formula");
        Objects.requireNonNull(formulaText, "formulaText");
        Objects.requireNonNull(unit, "unit");
        Objects.requireNonNull(validity, "validity");
        Objects.requireNonNull(source, "source");
        inputs = List.copyOf(inputs);
        if (!unit.equals(code.unit())) {
            throw new IllegalArgumentException(
                    formula + " declares unit " + unit + " but " + code + " is in " + code.unit());
        }
    }
}
