/**
 * The audit API ({@code /api/v1}, JSON, or CSV for any list with {@code ?format=csv} or {@code Accept: text/csv}):
 * advisories and their explanations, evaluations, quarantine, the rule and index catalogs, statistics, the intake
 * overview and a patient's timeline. {@link AuditQueries} holds the store queries (read only); the console renders
 * the same records. OpenAPI document: {@code /v3/api-docs}.
 */
package org.lungflag.service.api;
