-- The outbox is delivered in order per patient (no longer only per episode): the claim looks for an earlier row of
-- the same patient still waiting or in flight. No patient data.
CREATE INDEX outbox_patient ON outbox (patient_id, id);
