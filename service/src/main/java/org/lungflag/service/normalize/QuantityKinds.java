package org.lungflag.service.normalize;

import java.util.Locale;
import org.lungflag.rules.measure.QuantityKind;

/**
 * Codes of the conformance package's {@code input-kind} CodeSystem are the quantity kind names in lower case with
 * hyphens ({@code TIDAL_VOLUME} is {@code tidal-volume}).
 */
final class QuantityKinds {

    private QuantityKinds() {}

    static QuantityKind fromCode(String code) {
        return QuantityKind.valueOf(code.toUpperCase(Locale.ROOT).replace('-', '_'));
    }

    static String code(QuantityKind kind) {
        return kind.name().toLowerCase(Locale.ROOT).replace('_', '-');
    }
}
