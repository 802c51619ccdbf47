package org.lungflag.service.console;

import com.fasterxml.jackson.databind.JsonNode;
import java.math.BigDecimal;
import java.math.RoundingMode;
import java.time.Instant;
import java.time.ZoneOffset;
import java.time.format.DateTimeFormatter;
import java.time.format.DateTimeParseException;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import org.lungflag.rules.index.IndexCode;
import org.lungflag.rules.measure.QuantityKind;
import org.springframework.stereotype.Component;

/**
 * How the console words values for people ({@code ${@show.time(...)}} in the templates): times in UTC to the minute,
 * units as clinicians write them (mmHg for UCUM {@code mm[Hg]}), kinds and indices by their labels, numbers without
 * trailing zeros. The API keeps the exact stored forms.
 */
@Component("show")
public class ConsoleText {

    private static final DateTimeFormatter MINUTE =
            DateTimeFormatter.ofPattern("yyyy-MM-dd HH:mm 'UTC'").withZone(ZoneOffset.UTC);
    private static final DateTimeFormatter SECOND =
            DateTimeFormatter.ofPattern("yyyy-MM-dd HH:mm:ss 'UTC'").withZone(ZoneOffset.UTC);

    /** An instant (or its ISO text) as {@code 2026-12-01 07:45 UTC}; seconds only when not zero. */
    public String time(Object value) {
        if (value == null) {
            return "-";
        }
        Instant t;
        if (value instanceof Instant i) {
            t = i;
        } else {
            try {
                t = Instant.parse(value.toString());
            } catch (DateTimeParseException e) {
                return value.toString();
            }
        }
        return (t.getEpochSecond() % 60 == 0 ? MINUTE : SECOND).format(t);
    }

    /** A UCUM code as written on a chart: mm[Hg] as mmHg, cm[H2O] as cmH2O, the dimensionless 1 as nothing. */
    public String unit(String ucum) {
        if (ucum == null || ucum.equals("1")) {
            return "";
        }
        return ucum.replace("mm[Hg]", "mmHg").replace("cm[H2O]", "cmH2O");
    }

    /** A quantity kind's label (PAO2 as PaO2). */
    public String kind(String name) {
        try {
            return QuantityKind.valueOf(name).label();
        } catch (IllegalArgumentException | NullPointerException e) {
            return String.valueOf(name);
        }
    }

    /** An index's display (PF_RATIO as "PaO2/FiO2 ratio"). */
    public String index(String name) {
        try {
            return IndexCode.valueOf(name).display();
        } catch (IllegalArgumentException | NullPointerException e) {
            return IndexCode.fromCode(String.valueOf(name))
                    .map(IndexCode::display)
                    .orElse(String.valueOf(name));
        }
    }

    /** A number with at most two decimals and no trailing zeros (80.0 as 80, 1.6327 as 1.63). */
    public String number(double value) {
        if (Double.isNaN(value) || Double.isInfinite(value)) {
            return "-";
        }
        return BigDecimal.valueOf(value)
                .setScale(2, RoundingMode.HALF_UP)
                .stripTrailingZeros()
                .toPlainString();
    }

    /** A value with its unit, e.g. "80 mmHg", "0.5". */
    public String quantity(double value, String ucum) {
        String unit = unit(ucum);
        return unit.isEmpty() ? number(value) : number(value) + " " + unit;
    }

    /** An object's fields sorted by name (the parameters of an explanation). */
    public List<Map.Entry<String, String>> sorted(JsonNode object) {
        List<Map.Entry<String, String>> out = new ArrayList<>();
        if (object != null) {
            object.fields()
                    .forEachRemaining(
                            e -> out.add(Map.entry(e.getKey(), e.getValue().asText())));
        }
        out.sort(Map.Entry.comparingByKey());
        return out;
    }

    /** A lower-case word for an enum-like code (ENTERED_IN_ERROR as "entered in error"). */
    public String word(String code) {
        return code == null ? "-" : code.toLowerCase().replace('_', ' ');
    }
}
