/** The service's Micrometer metrics (codes as tags, never patient data). */
package org.lungflag.service.metrics;
