package org.lungflag.service.api;

import static org.assertj.core.api.Assertions.assertThat;

import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.springframework.http.MediaType;
import org.springframework.mock.http.MockHttpOutputMessage;

/**
 * CSV export: RFC 4180 (CRLF line ends, a header line, fields with comma, quote or line break in double quotes,
 * quotes doubled) and the OWASP "CSV injection" advice (a text cell starting with = + - @ is prefixed with ').
 */
class CsvMessageConverterTest {

    record Row(String text, double value, Instant at, String empty) {}

    private static String write(List<?> rows) throws Exception {
        MockHttpOutputMessage out = new MockHttpOutputMessage();
        new CsvMessageConverter().write(rows, List.class, CsvMessageConverter.TEXT_CSV, out);
        assertThat(out.getHeaders().getContentType()).isEqualTo(CsvMessageConverter.TEXT_CSV);
        return out.getBodyAsString(StandardCharsets.UTF_8);
    }

    @Test
    void writesAHeaderOfTheRecordComponentsAndQuotesPerRfc4180() throws Exception {
        String csv = write(List.of(
                new Row("plain", 160.0, Instant.parse("2026-12-01T07:45:00Z"), null),
                new Row("has, comma and \"quotes\"\nand a break", -1.5, null, null)));
        assertThat(csv)
                .isEqualTo("text,value,at,empty\r\n" + "plain,160.0,2026-12-01T07:45:00Z,\r\n"
                        + "\"has, comma and \"\"quotes\"\"\nand a break\",-1.5,,\r\n");
    }

    @Test
    void anEmptyListStillHasItsHeader() throws Exception {
        MockHttpOutputMessage out = new MockHttpOutputMessage();
        new CsvMessageConverter()
                .write(
                        List.of(),
                        new org.springframework.core.ParameterizedTypeReference<List<Row>>() {}.getType(),
                        CsvMessageConverter.TEXT_CSV,
                        out);
        assertThat(out.getBodyAsString(StandardCharsets.UTF_8)).isEqualTo("text,value,at,empty\r\n");
    }

    @Test
    void aTextCellThatASpreadsheetWouldRunAsAFormulaIsDefused() {
        assertThat(CsvMessageConverter.cell("=HYPERLINK(\"x\")")).isEqualTo("\"'=HYPERLINK(\"\"x\"\")\"");
        assertThat(CsvMessageConverter.cell("+1")).isEqualTo("'+1");
        assertThat(CsvMessageConverter.cell("@sum")).isEqualTo("'@sum");
        assertThat(CsvMessageConverter.cell(-3.0)).isEqualTo("-3.0");
    }

    @Test
    void onlyListsAreWrittenAndNothingIsRead() {
        CsvMessageConverter c = new CsvMessageConverter();
        assertThat(c.canWrite(List.class, List.class, MediaType.parseMediaType("text/csv")))
                .isTrue();
        assertThat(c.canWrite(List.class, List.class, MediaType.APPLICATION_JSON))
                .isFalse();
        assertThat(c.canRead(List.class, null, MediaType.parseMediaType("text/csv")))
                .isFalse();
    }
}
