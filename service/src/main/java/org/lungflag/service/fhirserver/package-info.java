/** The connection to the FHIR server: its address, timeouts, the shared FhirContext and the client. */
package org.lungflag.service.fhirserver;
