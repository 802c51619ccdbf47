package org.lungflag.rules.measure;

/**
 * An explicit repair of a charted value, recorded in the audit and shown in the advisory basis (clinical-reference
 * §9.2: never convert silently).
 *
 * @param code a code from the data-quality CodeSystem, e.g. {@code fio2-fraction-charted-as-percent}
 * @param description a plain sentence for the audit, with values but no patient data
 */
public record UnitRepair(String code, String description) {}
