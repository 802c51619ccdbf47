/**
 * The demo scenario player: {@link org.lungflag.sandbox.player.ScenarioPlayer} posts the committed scenario to a
 * FHIR server in accelerated clinical time (default 72 h in about 3 minutes), shifted so that it ends "now".
 */
package org.lungflag.sandbox.player;
