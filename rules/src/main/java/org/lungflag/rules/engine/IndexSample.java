package org.lungflag.rules.engine;

import java.time.Instant;

/** An index value computed at one of a rule's evaluations, kept for the rule's window aggregates. */
public record IndexSample(String index, Instant at, double value) {}
