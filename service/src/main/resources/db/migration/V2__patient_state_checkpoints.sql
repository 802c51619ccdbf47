-- The evaluator's checkpoints beside its engine state (PatientEvaluator.Resumable as JSON), so an instance whose
-- cached evaluator is stale or gone rebuilds one that re-runs late data exactly as the cached one would.
-- NULL on rows written before this column existed: those resume from engine_state alone.
ALTER TABLE patient_state ADD COLUMN engine_resume VARCHAR;
