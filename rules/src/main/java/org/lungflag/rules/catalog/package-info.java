/**
 * The rule catalog: rules as data. {@link org.lungflag.rules.catalog.RuleCatalog} loads {@code <rule-id>/rule.yaml}
 * files (from the classpath or a directory), parses them with positions, checks every key, type, reference and CEL
 * expression (CEL programs are compiled once here), and fails with {@code file:line:col} and an actionable sentence.
 * {@link org.lungflag.rules.catalog.ParameterOverrides} validates site parameter values; {@link
 * org.lungflag.rules.catalog.CatalogLock} guards against a changed rule without a version bump.
 */
package org.lungflag.rules.catalog;
