package org.lungflag.rules.measure;

import static org.assertj.core.api.Assertions.assertThat;

import java.util.ArrayList;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * The order of source references is the order of their FHIR reference strings ({@code Type/id/_history/version},
 * FHIR R4 "Resource references"), compared as {@link String#compareTo} does (the Java SE definition of
 * lexicographic order). Explanations and timelines sort by it, so it must not change when it is computed without
 * building the strings.
 */
class SourceRefTest {

    @Test
    void ordersAsTheReferenceStringsDo() {
        List<SourceRef> refs = new ArrayList<>(List.of(
                SourceRef.parse("Observation/12"),
                SourceRef.parse("Observation/12/_history/1"),
                SourceRef.parse("Observation/12/_history/10"),
                SourceRef.parse("Observation/12/_history/2"),
                SourceRef.parse("Observation/120"),
                SourceRef.parse("Observation/12-a"),
                SourceRef.parse("Observation/1"),
                SourceRef.parse("Observatio/1"),
                SourceRef.parse("ObservationX/1"),
                SourceRef.parse("Specimen/12/_history/1"),
                SourceRef.parse("Device/12")));
        Random random = new Random(11);
        String[] types = {"Observation", "Observatio", "ObservationA", "Specimen", "O"};
        String alphabet = "0129-.a/_";
        for (int i = 0; i < 3000; i++) {
            String id = word(random, alphabet.substring(0, 7), 1 + random.nextInt(5));
            String version = random.nextInt(3) == 0 ? null : word(random, "0129", 1 + random.nextInt(3));
            refs.add(new SourceRef(types[random.nextInt(types.length)], id, version));
        }
        for (SourceRef a : refs) {
            for (int j = 0; j < refs.size(); j += 1 + random.nextInt(7)) {
                SourceRef b = refs.get(j);
                assertThat(a.compareTo(b))
                        .as("%s vs %s", a, b)
                        .isEqualTo(a.toString().compareTo(b.toString()));
            }
            assertThat(a.compareTo(a)).isZero();
        }
    }

    @Test
    void printsTheVersionedReferenceOrTheUnversionedOne() {
        // FHIR R4 references: Type/id and Type/id/_history/vid
        assertThat(SourceRef.observation("8812", "3")).hasToString("Observation/8812/_history/3");
        assertThat(SourceRef.observation("8812", null)).hasToString("Observation/8812");
        assertThat(SourceRef.observation("8812", "3").unversioned()).isEqualTo("Observation/8812");
    }

    private static String word(Random random, String alphabet, int length) {
        StringBuilder sb = new StringBuilder();
        for (int i = 0; i < length; i++) {
            sb.append(alphabet.charAt(random.nextInt(alphabet.length())));
        }
        return sb.toString();
    }
}
