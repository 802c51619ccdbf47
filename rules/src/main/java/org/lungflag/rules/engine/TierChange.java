package org.lungflag.rules.engine;

import java.time.Instant;

/** An episode's tier from {@code at} on. */
public record TierChange(Instant at, String tier) {}
