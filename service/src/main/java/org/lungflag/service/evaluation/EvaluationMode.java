package org.lungflag.service.evaluation;

/** Whether an evaluation's effects were written to the record or only audited. */
public enum EvaluationMode {
    ACTIVE,
    SILENT
}
