/**
 * Data-quality reasons: why an input was refused or repaired, or why an index or rule was not evaluable. Shared by
 * the live service, replay and the conformance package's {@code data-quality} CodeSystem.
 */
package org.lungflag.rules.quality;
