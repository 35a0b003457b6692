-- Retention (src/store/retention.ts): the leader prunes old reports, findings, day profiles
-- and baselines after each successful run. These indexes let those deletes find their rows
-- without scanning whole tables, whatever the age of the store.

-- Runs by date, successful or not (runs_success_by_date covers successes only).
CREATE INDEX runs_by_date ON runs (run_date);
-- Day profiles by date, whatever their profile fingerprint.
CREATE INDEX day_profiles_by_date ON day_profiles (snapshot_date);
-- The newest saved baselines are kept.
CREATE INDEX baselines_by_saved ON baselines (saved_at DESC, id DESC);
