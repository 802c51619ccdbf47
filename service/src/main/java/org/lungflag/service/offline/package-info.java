/**
 * The pipeline without a database or FHIR server (normalized resources → the same evaluator and engine → the same
 * Flag, Provenance and derived-index builders), for the dry run and replay.
 */
package org.lungflag.service.offline;
