-- A run stopped on purpose (the service shutting down) is recorded as outcome
-- 'interrupted': it is not a verdict and not a failure that pages, but it is kept in the
-- history like a failure (error text, no report, no findings touched).
ALTER TABLE runs DROP CONSTRAINT runs_outcome_known;
ALTER TABLE runs ADD CONSTRAINT runs_outcome_known CHECK (outcome IN ('success', 'failure', 'interrupted'));
ALTER TABLE runs DROP CONSTRAINT runs_success_has_report;
ALTER TABLE runs ADD CONSTRAINT runs_success_has_report CHECK (
  (outcome = 'success' AND report IS NOT NULL AND status IS NOT NULL AND error IS NULL)
  OR (outcome IN ('failure', 'interrupted') AND report IS NULL AND status IS NULL AND error IS NOT NULL)
);
