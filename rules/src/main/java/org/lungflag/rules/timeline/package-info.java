/**
 * The bounded per-patient timeline ({@link org.lungflag.rules.timeline.PatientTimeline}): normalized facts in
 * clinical order, keyed by resource id and version so redelivery changes nothing, pruned to a window that keeps
 * the facts still in force. Stored compactly (column-wise series and a resource table, both package-private).
 */
package org.lungflag.rules.timeline;
