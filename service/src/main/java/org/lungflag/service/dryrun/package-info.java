/** The dry run: what Lungflag would write for a Bundle of inputs, computed without storing or writing anything. */
package org.lungflag.service.dryrun;
