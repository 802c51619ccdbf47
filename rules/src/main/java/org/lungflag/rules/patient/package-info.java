/** The few demographic facts the rules need (sex for clinical use, birth date); no names or identifiers. */
package org.lungflag.rules.patient;
