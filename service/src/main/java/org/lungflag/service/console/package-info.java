/**
 * The quality console: server-rendered pages (Thymeleaf) over the audit API's queries: overview (intake health),
 * advisories and an episode's plain-language explanation, a patient's timeline (Chart.js from a webjar), evaluation
 * inputs, rules (with the admin's silent/active switch), quarantine. Every page that shows an advisory shows the
 * caution. Resource ids only; no patient names.
 */
package org.lungflag.service.console;
