/** Health: the FHIR server, the audit database (Spring Boot's own check) and the write-back backlog. */
package org.lungflag.service.health;
