package org.lungflag.rules.units;

import java.io.IOException;
import java.io.InputStream;
import java.io.UncheckedIOException;
import java.math.BigDecimal;
import java.math.MathContext;
import java.util.ArrayList;
import java.util.HashSet;
import java.util.List;
import java.util.Map;
import java.util.Objects;
import java.util.Set;
import java.util.concurrent.ConcurrentHashMap;
import org.fhir.ucum.Decimal;
import org.fhir.ucum.DefinedUnit;
import org.fhir.ucum.Prefix;
import org.fhir.ucum.UcumEssenceService;
import org.fhir.ucum.UcumException;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.quality.DataQualityReason;

/**
 * Converts values between UCUM units with the UCUM reference library ({@code org.fhir:ucum}, loading the {@code
 * ucum-essence.xml} it ships). No conversion factor is written by hand here: for each (from, to) pair the library
 * converts a 22-digit one, zero and two; the pair is accepted only when the conversion is linear through zero, and
 * the factor is cached. Values are then multiplied in decimal arithmetic, so results match the library's exact
 * decimal conversion (e.g. 10.7 kPa = 80.2568… mm[Hg] with UCUM's 133.3220 Pa per mm[Hg], clinical-reference §9.1).
 *
 * <p>Invalid UCUM (e.g. {@code cm[H20]} with a zero) is refused as {@link DataQualityReason#UNKNOWN_UNIT}; valid
 * UCUM of another dimension (or a non-linear special unit such as {@code Cel}) as {@link
 * DataQualityReason#INCOMPATIBLE_UNIT}. UCUM curly-brace annotations are unity, so {@code {breaths}/min} is {@code
 * /min}.
 *
 * <p>Thread-safe; {@link #shared()} is the one instance the live service and replay use.
 */
public final class UnitConverter {

    /** Bounds the factor cache: unit strings come from outside, and unknown ones must not grow it without end. */
    private static final int MAX_CACHED_PAIRS = 2048;

    private static final String ONE = "1.000000000000000000000";
    private static final String TWO = "2.000000000000000000000";
    private static final MathContext PRECISION = MathContext.DECIMAL128;

    private final UcumEssenceService ucum;
    private final Set<String> specialUnits;
    private final List<String> prefixes;
    private final Map<String, Factor> factors = new ConcurrentHashMap<>();

    /** A cached outcome for a unit pair: a factor, or why there is none. */
    private record Factor(BigDecimal factor, DataQualityReason reason, String problem) {}

    private static final class Holder {
        static final UnitConverter SHARED = new UnitConverter();
    }

    /** Loads the UCUM essence shipped inside the UCUM library jar. */
    public UnitConverter() {
        this(loadEssence());
    }

    private UnitConverter(UcumEssenceService ucum) {
        this.ucum = ucum;
        Set<String> special = new HashSet<>();
        for (DefinedUnit u : ucum.getModel().getDefinedUnits()) {
            if (u.isSpecial()) {
                special.add(u.getCode());
            }
        }
        this.specialUnits = Set.copyOf(special);
        List<String> p = new ArrayList<>();
        for (Prefix prefix : ucum.getModel().getPrefixes()) {
            p.add(prefix.getCode());
        }
        this.prefixes = List.copyOf(p);
    }

    /** The one shared instance (loading the essence takes a fraction of a second). */
    public static UnitConverter shared() {
        return Holder.SHARED;
    }

    private static UcumEssenceService loadEssence() {
        try (InputStream in = UcumEssenceService.class.getResourceAsStream("/ucum-essence.xml")) {
            if (in == null) {
                throw new IllegalStateException("ucum-essence.xml not found on the classpath (org.fhir:ucum)");
            }
            return new UcumEssenceService(in);
        } catch (IOException e) {
            throw new UncheckedIOException("cannot read ucum-essence.xml", e);
        } catch (UcumException e) {
            throw new IllegalStateException("cannot load the UCUM essence: " + e.getMessage(), e);
        }
    }

    /** The UCUM version of the loaded essence, e.g. {@code 1.9}. */
    public String ucumVersion() {
        return ucum.ucumIdentification().getVersion();
    }

    /** Whether {@code unit} is a valid UCUM expression. Blank or {@code null} is not. */
    public boolean isValid(String unit) {
        return unit != null && !unit.isBlank() && ucum.validate(unit) == null;
    }

    /** Converts to the canonical unit of a numeric quantity kind. */
    public ConversionResult toCanonical(QuantityKind kind, double value, String unit) {
        Objects.requireNonNull(kind, "kind");
        if (kind.isCategorical()) {
            return new ConversionResult.Failed(
                    DataQualityReason.INCOMPATIBLE_UNIT, kind.label() + " is categorical and has no unit");
        }
        return convert(value, unit, kind.canonicalUnit());
    }

    /** Converts {@code value} from one UCUM unit to another. */
    public ConversionResult convert(double value, String from, String to) {
        Objects.requireNonNull(to, "to");
        if (!Double.isFinite(value)) {
            return new ConversionResult.Failed(
                    DataQualityReason.NON_FINITE_VALUE, "value " + value + " is not a finite number");
        }
        Factor f = factor(from, to);
        if (f.factor() == null) {
            return new ConversionResult.Failed(f.reason(), f.problem());
        }
        if (f.factor().compareTo(BigDecimal.ONE) == 0) {
            return new ConversionResult.Converted(value, to);
        }
        double converted =
                BigDecimal.valueOf(value).multiply(f.factor(), PRECISION).doubleValue();
        if (!Double.isFinite(converted)) {
            return new ConversionResult.Failed(
                    DataQualityReason.NON_FINITE_VALUE,
                    "value " + value + " " + Units.quote(from) + " overflows when converted to " + to);
        }
        return new ConversionResult.Converted(converted, to);
    }

    /** The UCUM library's own conversion of a decimal string: the reference the cached path is tested against. */
    String convertWithLibrary(String decimal, String from, String to) throws UcumException {
        return ucum.convert(new Decimal(decimal), from, to).asDecimal();
    }

    private Factor factor(String from, String to) {
        if (from == null || from.isBlank()) {
            return new Factor(null, DataQualityReason.UNKNOWN_UNIT, "no unit given (expected UCUM, e.g. " + to + ")");
        }
        String key = from + '\u0000' + to;
        Factor cached = factors.get(key);
        if (cached != null) {
            return cached;
        }
        Factor computed = computeFactor(from, to);
        if (factors.size() < MAX_CACHED_PAIRS) {
            factors.putIfAbsent(key, computed);
        }
        return computed;
    }

    /** Whether a UCUM expression contains a special (non-ratio-scale) unit atom, with or without a prefix. */
    private boolean involvesSpecialUnit(String expression) {
        String withoutAnnotations = expression.replaceAll("\\{[^}]*\\}", "");
        for (String atom : withoutAnnotations.split("[./()]")) {
            String a = atom.replaceAll("[-+]?\\d+$", "");
            if (a.isEmpty()) {
                continue;
            }
            if (specialUnits.contains(a)) {
                return true;
            }
            for (String prefix : prefixes) {
                if (a.length() > prefix.length()
                        && a.startsWith(prefix)
                        && specialUnits.contains(a.substring(prefix.length()))) {
                    return true;
                }
            }
        }
        return false;
    }

    private Factor computeFactor(String from, String to) {
        if (from.equals(to)) {
            String invalid = ucum.validate(from);
            return invalid == null
                    ? new Factor(BigDecimal.ONE, null, null)
                    : new Factor(
                            null, DataQualityReason.UNKNOWN_UNIT, "unit " + Units.quote(from) + " is not valid UCUM");
        }
        if (ucum.validate(from) != null) {
            return new Factor(null, DataQualityReason.UNKNOWN_UNIT, "unit " + Units.quote(from) + " is not valid UCUM");
        }
        if (ucum.validate(to) != null) {
            throw new IllegalArgumentException("target unit " + to + " is not valid UCUM");
        }
        if (involvesSpecialUnit(from) || involvesSpecialUnit(to)) {
            // UCUM special units (Cel, [pH], …) are not multiples of their canonical form; only identity is safe
            return new Factor(
                    null,
                    DataQualityReason.INCOMPATIBLE_UNIT,
                    "unit " + Units.quote(from) + " and " + to + " involve a non-linear UCUM special unit; only"
                            + " the identical unit is accepted");
        }
        try {
            if (!ucum.isComparable(from, to)) {
                return new Factor(
                        null,
                        DataQualityReason.INCOMPATIBLE_UNIT,
                        "unit " + Units.quote(from) + " cannot be converted to " + to + " (different dimension)");
            }
            BigDecimal one =
                    new BigDecimal(ucum.convert(new Decimal(ONE), from, to).asDecimal());
            BigDecimal zero =
                    new BigDecimal(ucum.convert(new Decimal("0"), from, to).asDecimal());
            BigDecimal two =
                    new BigDecimal(ucum.convert(new Decimal(TWO), from, to).asDecimal());
            BigDecimal deviation =
                    two.subtract(one.multiply(BigDecimal.valueOf(2))).abs();
            BigDecimal allowed = one.abs().scaleByPowerOfTen(-15); // the library rounds its last decimal digits
            if (zero.signum() != 0 || one.signum() == 0 || deviation.compareTo(allowed) > 0) {
                return new Factor(
                        null,
                        DataQualityReason.INCOMPATIBLE_UNIT,
                        "unit " + Units.quote(from) + " is not a linear multiple of " + to);
            }
            return new Factor(one.stripTrailingZeros(), null, null);
        } catch (UcumException | RuntimeException e) {
            // special units (e.g. Cel, [pH] against mol/L) that the library cannot convert linearly
            return new Factor(
                    null,
                    DataQualityReason.INCOMPATIBLE_UNIT,
                    "unit " + Units.quote(from) + " cannot be converted to " + to + " by UCUM");
        }
    }
}
