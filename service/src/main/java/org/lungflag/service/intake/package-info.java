/**
 * Intake: the rest-hook receiver, the durable inbox, the catch-up search and Subscription registration. Intake
 * acknowledges only what it has recorded and never evaluates on the caller's thread.
 */
package org.lungflag.service.intake;
