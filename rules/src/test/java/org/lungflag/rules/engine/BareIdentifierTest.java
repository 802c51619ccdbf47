package org.lungflag.rules.engine;

import static org.assertj.core.api.Assertions.assertThat;

import org.junit.jupiter.api.Test;

/**
 * Conditions that are one identifier are read from the scope without a CEL run; anything else, including CEL's
 * literals and reserved words (CEL language definition, "Syntax" and "Reserved words"), still goes to CEL.
 */
class BareIdentifierTest {

    @Test
    void onlyAPlainIdentifierIsTakenAsOne() {
        assertThat(CompiledRule.bareIdentifier("use_pf")).isEqualTo("use_pf");
        assertThat(CompiledRule.bareIdentifier("  pf_ratio_available ")).isEqualTo("pf_ratio_available");
        assertThat(CompiledRule.bareIdentifier("_x1")).isEqualTo("_x1");
        for (String other : new String[] {
            "!use_pf", "use_pf && use_sf", "params.min_peep", "true", "false", "null", "in", "1", "1x", "", " ", "é"
        }) {
            assertThat(CompiledRule.bareIdentifier(other)).as(other).isNull();
        }
        assertThat(CompiledRule.bareIdentifier(null)).isNull();
    }
}
