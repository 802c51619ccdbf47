package org.lungflag.rules.engine;

import static org.assertj.core.api.Assertions.assertThat;

import java.time.Instant;
import java.time.ZoneId;
import java.time.format.DateTimeFormatter;
import java.util.Locale;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * Clock times in texts are {@code HH:mm} in the display zone, as java.time's {@link DateTimeFormatter} pattern
 * {@code HH:mm} prints them (the reference here), including zones with half- and three-quarter-hour offsets and
 * daylight-saving changes (IANA tz database rules as shipped with the JDK).
 */
class TextsTimeTest {

    @Test
    void printsTheSameClockTimeAsTheFormatter() {
        Random random = new Random(5);
        for (String zone : new String[] {
            "UTC", "Europe/Berlin", "America/St_Johns", "Asia/Kathmandu", "Australia/Lord_Howe", "Pacific/Chatham"
        }) {
            ZoneId id = ZoneId.of(zone);
            Texts texts = new Texts(id);
            DateTimeFormatter reference =
                    DateTimeFormatter.ofPattern("HH:mm", Locale.ROOT).withZone(id);
            for (int i = 0; i < 20_000; i++) {
                // 1900..2100, with seconds and nanoseconds, negative epoch seconds included
                long second = -2_208_988_800L + (long) (random.nextDouble() * 6_311_433_600L);
                Instant t = Instant.ofEpochSecond(second, random.nextInt(1_000_000_000));
                assertThat(texts.time(t)).as("%s in %s", t, zone).isEqualTo(reference.format(t));
            }
            // around the 2026 European daylight-saving changes (29 March, 25 October, 01:00 UTC)
            for (Instant t = Instant.parse("2026-03-28T22:00:00Z");
                    t.isBefore(Instant.parse("2026-03-29T04:00:00Z"));
                    t = t.plusSeconds(59)) {
                assertThat(texts.time(t)).isEqualTo(reference.format(t));
            }
            for (Instant t = Instant.parse("2026-10-24T22:00:00Z");
                    t.isBefore(Instant.parse("2026-10-25T04:00:00Z"));
                    t = t.plusSeconds(59)) {
                assertThat(texts.time(t)).isEqualTo(reference.format(t));
            }
        }
        assertThat(new Texts(ZoneId.of("Europe/Berlin")).time(Instant.parse("2026-03-29T01:30:00Z")))
                .isEqualTo("03:30"); // CEST from 01:00 UTC on 29 March 2026 (EU summer-time rule)
    }
}
