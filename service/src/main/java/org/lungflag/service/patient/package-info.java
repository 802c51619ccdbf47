/** The few patient facts Lungflag needs (sex, birth date), read from the FHIR server and cached. */
package org.lungflag.service.patient;
