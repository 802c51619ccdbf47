/**
 * Pairing an anchor time (a blood-gas collection time) with the values in force then: the latest setting and the
 * latest measurement of each kind within their look-backs, never a value after the anchor, and what was missing.
 */
package org.lungflag.rules.pairing;
