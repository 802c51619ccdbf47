package org.lungflag.rules.catalog;

import java.util.Collections;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Optional;
import org.lungflag.rules.index.IndexCode;
import org.lungflag.rules.measure.BodyPosition;
import org.lungflag.rules.measure.QuantityKind;
import org.lungflag.rules.measure.SupportMode;
import org.lungflag.rules.patient.Sex;

/**
 * The named, typed variables the engine binds for every rule's expressions and templates (the rule-writer's
 * vocabulary; DEVELOPERS.md lists them). Besides these, a rule sees {@code params.<name>} for its declared
 * parameters, its declared aggregates and its derived values.
 *
 * <ul>
 *   <li>every index, named by its code with underscores ({@code pf_ratio}, {@code oxygen_saturation_index}), a
 *       {@code double}; {@code <name>_available} ({@code bool}) and {@code <name>_reason} (the data-quality code
 *       when not evaluable, else {@code ""});
 *   <li>every numeric quantity kind in force at the anchor, named by its kind in lower case ({@code peep}, {@code
 *       fio2} as a fraction, {@code spo2} as a fraction, {@code plateau_pressure}), a {@code double} in the kind's
 *       canonical unit, and {@code <name>_available}; blood-gas kinds (PaO2, PaCO2, SaO2, pH) only from arterial
 *       samples; also {@code spo2_percent};
 *   <li>the patient and support: {@code age_years}, {@code age_known}, {@code pediatric}, {@code sex}, {@code
 *       support_mode}, {@code support_known}, {@code support_flow} (L/min), {@code support_flow_available}, {@code
 *       invasive}, {@code position}, {@code position_known}, {@code prone}.
 * </ul>
 *
 * <p>A value that is not available is bound as NaN (never 0); every condition that reads it must be guarded by its
 * {@code _available} variable or by the rule's {@code requires} list, and the loader checks that it is.
 */
public final class RuleVariables {

    /** Where a variable's value comes from. */
    public enum Origin {
        INDEX_VALUE,
        INDEX_AVAILABLE,
        INDEX_REASON,
        MEASUREMENT_VALUE,
        MEASUREMENT_AVAILABLE,
        AGE_YEARS,
        AGE_KNOWN,
        PEDIATRIC,
        SEX,
        SUPPORT_MODE,
        SUPPORT_KNOWN,
        SUPPORT_FLOW,
        SUPPORT_FLOW_AVAILABLE,
        INVASIVE,
        POSITION,
        POSITION_KNOWN,
        PRONE
    }

    /**
     * One engine-bound variable.
     *
     * @param index the index for index variables, else {@code null}
     * @param kind the quantity kind for measurement variables, else {@code null}
     * @param percent for {@code spo2_percent}: the value is the fraction × 100
     */
    public record Variable(
            String name,
            VariableType type,
            Origin origin,
            IndexCode index,
            QuantityKind kind,
            boolean percent,
            String description) {

        /** The {@code _available} companion of a value variable, if it has one. */
        public Optional<String> availability() {
            return switch (origin) {
                case INDEX_VALUE, MEASUREMENT_VALUE -> Optional.of(name + "_available");
                case SUPPORT_FLOW -> Optional.of("support_flow_available");
                case AGE_YEARS -> Optional.of("age_known");
                default -> Optional.empty();
            };
        }
    }

    private static final Map<String, Variable> STANDARD = build();

    /** String constants an expression may compare with: support modes, body positions and sexes. */
    public static final List<String> STRING_CONSTANTS = buildConstants();

    private RuleVariables() {}

    /** Every engine-bound variable by name, in a stable order. */
    public static Map<String, Variable> standard() {
        return STANDARD;
    }

    public static Optional<Variable> find(String name) {
        return Optional.ofNullable(STANDARD.get(name));
    }

    public static String indexVariable(IndexCode code) {
        return code.code().replace('-', '_');
    }

    public static String measurementVariable(QuantityKind kind) {
        return kind.name().toLowerCase(Locale.ROOT);
    }

    /** Whether a measurement kind is bound only from arterial samples. */
    public static boolean arterialOnly(QuantityKind kind) {
        return kind == QuantityKind.PAO2
                || kind == QuantityKind.PACO2
                || kind == QuantityKind.SAO2
                || kind == QuantityKind.PH;
    }

    private static Map<String, Variable> build() {
        Map<String, Variable> m = new LinkedHashMap<>();
        for (IndexCode code : IndexCode.values()) {
            String n = indexVariable(code);
            m.put(n, new Variable(n, VariableType.DOUBLE, Origin.INDEX_VALUE, code, null, false, code.display()));
            m.put(
                    n + "_available",
                    new Variable(
                            n + "_available",
                            VariableType.BOOL,
                            Origin.INDEX_AVAILABLE,
                            code,
                            null,
                            false,
                            "whether " + code.display() + " was computed"));
            m.put(
                    n + "_reason",
                    new Variable(
                            n + "_reason",
                            VariableType.STRING,
                            Origin.INDEX_REASON,
                            code,
                            null,
                            false,
                            "why " + code.display() + " was not computed (data-quality code), else empty"));
        }
        for (QuantityKind kind : QuantityKind.values()) {
            if (kind.isCategorical()) {
                continue;
            }
            String n = measurementVariable(kind);
            m.put(
                    n,
                    new Variable(
                            n,
                            VariableType.DOUBLE,
                            Origin.MEASUREMENT_VALUE,
                            null,
                            kind,
                            false,
                            kind.label() + " in force at the anchor, in " + kind.canonicalUnit()));
            m.put(
                    n + "_available",
                    new Variable(
                            n + "_available",
                            VariableType.BOOL,
                            Origin.MEASUREMENT_AVAILABLE,
                            null,
                            kind,
                            false,
                            "whether " + kind.label() + " is in force at the anchor"));
        }
        m.put(
                "spo2_percent",
                new Variable(
                        "spo2_percent",
                        VariableType.DOUBLE,
                        Origin.MEASUREMENT_VALUE,
                        null,
                        QuantityKind.SPO2,
                        true,
                        "SpO2 in force at the anchor, in %"));
        m.put(
                "spo2_percent_available",
                new Variable(
                        "spo2_percent_available",
                        VariableType.BOOL,
                        Origin.MEASUREMENT_AVAILABLE,
                        null,
                        QuantityKind.SPO2,
                        true,
                        "whether SpO2 is in force at the anchor"));
        put(m, "age_years", VariableType.INT, Origin.AGE_YEARS, "age in completed years at the anchor");
        put(m, "age_known", VariableType.BOOL, Origin.AGE_KNOWN, "whether the birth date is known");
        put(m, "pediatric", VariableType.BOOL, Origin.PEDIATRIC, "age known and under 18 at the anchor");
        put(m, "sex", VariableType.STRING, Origin.SEX, "MALE, FEMALE or UNKNOWN");
        put(m, "support_mode", VariableType.STRING, Origin.SUPPORT_MODE, "support in force, e.g. INVASIVE_VENTILATION");
        put(m, "support_known", VariableType.BOOL, Origin.SUPPORT_KNOWN, "whether the support in force is recorded");
        put(m, "support_flow", VariableType.DOUBLE, Origin.SUPPORT_FLOW, "oxygen or gas flow of the support, L/min");
        put(m, "support_flow_available", VariableType.BOOL, Origin.SUPPORT_FLOW_AVAILABLE, "whether a flow is charted");
        put(m, "invasive", VariableType.BOOL, Origin.INVASIVE, "invasive mechanical ventilation in force");
        put(m, "position", VariableType.STRING, Origin.POSITION, "PRONE, SUPINE or OTHER, else empty");
        put(m, "position_known", VariableType.BOOL, Origin.POSITION_KNOWN, "whether a body position is recorded");
        put(m, "prone", VariableType.BOOL, Origin.PRONE, "prone position in force");
        return Collections.unmodifiableMap(m);
    }

    private static void put(Map<String, Variable> m, String name, VariableType type, Origin origin, String d) {
        m.put(name, new Variable(name, type, origin, null, null, false, d));
    }

    private static List<String> buildConstants() {
        java.util.ArrayList<String> c = new java.util.ArrayList<>();
        for (SupportMode s : SupportMode.values()) {
            c.add(s.name());
        }
        for (BodyPosition p : BodyPosition.values()) {
            c.add(p.name());
        }
        for (Sex s : Sex.values()) {
            c.add(s.name());
        }
        for (var r : org.lungflag.rules.quality.DataQualityReason.values()) {
            c.add(r.code());
        }
        c.add("");
        return List.copyOf(c);
    }
}
