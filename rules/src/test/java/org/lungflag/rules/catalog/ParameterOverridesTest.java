package org.lungflag.rules.catalog;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import java.time.Duration;
import java.util.Map;
import org.junit.jupiter.api.Test;

class ParameterOverridesTest {

    static final RuleCatalog CATALOG = RuleCatalog.loadDefault();

    @Test
    void overrides_are_typed_by_their_declaration_and_defaults_fill_the_rest() {
        ParameterOverrides o = ParameterOverrides.from(
                CATALOG, Map.of("hypoxemia.pf_mild_max", "280", "hypoxemia.resolve_after", "8h"));
        RuleDefinition rule = CATALOG.rule("hypoxemia").orElseThrow();
        Map<String, Object> effective = o.effective(rule);
        assertThat(effective.get("pf_mild_max")).isEqualTo(280.0);
        assertThat(effective.get("resolve_after")).isEqualTo(Duration.ofHours(8));
        assertThat(effective.get("pf_moderate_max")).isEqualTo(200.0);
    }

    @Test
    void an_unknown_rule_is_refused_naming_the_key() {
        assertThatThrownBy(() -> ParameterOverrides.from(CATALOG, Map.of("hypoxaemia.pf_mild_max", "280")))
                .isInstanceOf(ParameterOverrideException.class)
                .hasMessageContaining("hypoxaemia.pf_mild_max")
                .hasMessageContaining("no rule 'hypoxaemia'")
                .hasMessageContaining("did you mean 'hypoxemia'");
    }

    @Test
    void an_unknown_parameter_is_refused_naming_the_key_and_the_parameters_there_are() {
        assertThatThrownBy(() -> ParameterOverrides.from(CATALOG, Map.of("hypoxemia.pf_mild", "280")))
                .isInstanceOf(ParameterOverrideException.class)
                .hasMessageContaining("hypoxemia.pf_mild")
                .hasMessageContaining("no parameter 'pf_mild'")
                .hasMessageContaining("pf_mild_max");
    }

    @Test
    void a_value_of_the_wrong_type_is_refused_naming_the_key_and_type() {
        assertThatThrownBy(() -> ParameterOverrides.from(CATALOG, Map.of("hypoxemia.resolve_after", "six hours")))
                .isInstanceOf(ParameterOverrideException.class)
                .hasMessageContaining("hypoxemia.resolve_after")
                .hasMessageContaining("duration");
        assertThatThrownBy(() -> ParameterOverrides.from(CATALOG, Map.of("tidal-volume-high.readings", 2.5)))
                .isInstanceOf(ParameterOverrideException.class)
                .hasMessageContaining("whole number");
        assertThatThrownBy(() -> ParameterOverrides.from(CATALOG, Map.of("nonsense", "1")))
                .isInstanceOf(ParameterOverrideException.class)
                .hasMessageContaining("<rule-id>.<parameter>");
    }

    @Test
    void a_sweep_value_replaces_one_override() {
        ParameterOverrides o = ParameterOverrides.none().with(CATALOG, "driving-pressure-high.dp_min", 14);
        assertThat(o.asMap()).containsEntry("driving-pressure-high.dp_min", 14.0);
        assertThat(o.with(CATALOG, "driving-pressure-high.dp_min", "16").asMap())
                .containsEntry("driving-pressure-high.dp_min", 16.0);
    }
}
