package org.lungflag.rules.engine;

import java.util.List;
import java.util.Map;

/**
 * Why an evaluation came out as it did, in data and in words (design invariant 5: explainable from the audit).
 *
 * @param measurements the measurements used, with sources and converted values
 * @param indices the index values used, with formula refs
 * @param parameters every parameter of the rule with the value in effect (and its unit)
 * @param advisoryText the advisory sentence when a tier is active, else empty
 * @param basisText plain language with values and times, e.g. "P/F 160 mmHg (PaO2 80 mmHg at 03:10, ...)"
 * @param cautionText the general caution, the rule's caution and, when SpO2 was used, the pulse-oximetry caution
 */
public record Explanation(
        List<UsedMeasurement> measurements,
        List<UsedIndex> indices,
        Map<String, String> parameters,
        String advisoryText,
        String basisText,
        String cautionText) {

    public Explanation {
        measurements = List.copyOf(measurements);
        indices = List.copyOf(indices);
        parameters = Map.copyOf(parameters);
    }
}
