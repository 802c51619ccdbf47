package org.lungflag.rules.catalog;

import static org.assertj.core.api.Assertions.assertThat;

import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.CsvSource;

class TemplateTest {

    @ParameterizedTest(name = "{0} with {1} decimals is {2}")
    @CsvSource({
        "160.0, -1, 160",
        "146.66666666666669, -1, 146.67",
        "0.5, -1, 0.5",
        "1.005, 2, 1.01",
        "2.5, 0, 3",
        "-2.5, 0, -3",
        "-0.004, 2, 0.00",
        "0.04, -1, 0.04",
        "8.502678, 1, 8.5",
        "12.0, 1, 12.0",
        "0.5, 2, 0.50",
        "1234567.891, 2, 1234567.89",
        // negative values that round to zero print without a sign (common practice, no source)
        "-0.0, 1, 0.0",
        "-0.0, -1, 0",
        "-0.004, -1, 0",
        "-0.00000000001, 9, 0.000000000",
        "-0.0000000004, 9, 0.000000000",
        "-0.5, 0, -1",
        "-10.25, 1, -10.3"
    })
    void numbers_render_with_fixed_or_up_to_two_decimals_rounding_half_up(double value, int decimals, String text) {
        assertThat(Template.formatNumber(value, decimals)).isEqualTo(text);
    }

    @Test
    void a_placeholder_that_is_not_available_leaves_the_whole_text_out() {
        Template t = Template.parse("P/F {pf_ratio|0} mmHg at {pao2.time}", (o, m) -> {
            throw new AssertionError(m);
        });
        assertThat(t.placeholders()).extracting(Template.Placeholder::variable).containsExactly("pf_ratio", "pao2");
        assertThat(t.render(ph -> ph.variable().equals("pf_ratio") ? "160" : "03:10"))
                .isEqualTo("P/F 160 mmHg at 03:10");
        assertThat(t.render(ph -> ph.variable().equals("pf_ratio") ? null : "03:10"))
                .isNull();
    }

    @Test
    void an_unclosed_placeholder_is_reported_at_its_offset() {
        int[] at = {-1};
        assertThat(Template.parse("P/F {pf_ratio", (o, m) -> at[0] = o)).isNull();
        assertThat(at[0]).isEqualTo(4);
    }
}
