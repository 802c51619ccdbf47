package org.lungflag.rules.catalog;

/**
 * A source a rule cites.
 *
 * @param id short id used by parameters, e.g. {@code berlin-2012}
 * @param citation the bibliographic citation
 * @param supports what in the rule it supports
 */
public record RuleSource(String id, String citation, String supports, SourceTag tag) {}
