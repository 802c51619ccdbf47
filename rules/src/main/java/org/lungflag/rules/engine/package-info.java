/**
 * The evaluation engine and advisory episodes. {@link org.lungflag.rules.engine.RuleEngine} is a pure step
 * function over an immutable, JSON-serializable {@link org.lungflag.rules.engine.EngineState}: it pairs the values in
 * force at an evaluation point, computes the indices once, evaluates each triggered rule's precompiled CEL, applies
 * the temporal semantics (sustained onset, consecutive readings, hysteresis, expiry) and explains every result.
 * {@link org.lungflag.rules.engine.PatientEvaluator} runs it per patient with checkpoints, so late or reordered facts
 * give the same results as facts in clinical order.
 */
package org.lungflag.rules.engine;
