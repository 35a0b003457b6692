-- Plumbline's own tables, first version.
--
-- Applied by src/store/migrate.ts inside one transaction, after
-- `SET LOCAL search_path TO <store schema>`: this file names no schema, so the
-- schema is whatever `store.schema` says in the config (default `plumbline`).
-- No BEGIN/COMMIT here; the runner owns the transaction. Never edit a migration
-- that has shipped: its checksum is recorded and a changed file is refused. Add
-- 002_<name>.sql instead.
--
-- Dates of snapshots are `date` (read back as `run_date::text`, YYYY-MM-DD);
-- instants are `timestamptz`.

-- runs: one row per attempt to evaluate a snapshot date, successful or not.
-- A date may have several rows (re-runs, back-fills); the newest successful row
-- (highest id) is the date's report. Failures keep only the error.
CREATE TABLE runs (
  id                   bigint GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
  run_date             date NOT NULL,
  started_at           timestamptz NOT NULL,
  finished_at          timestamptz NOT NULL,
  outcome              text NOT NULL,
  -- Overall status of the report (worst finding); null for failures.
  status               text,
  config_fingerprint   text NOT NULL,
  baseline_fingerprint text,
  error                text,
  duration_seconds     double precision NOT NULL,
  -- The versioned JSON report (src/report/contract.ts); successes only.
  report               jsonb,
  CONSTRAINT runs_outcome_known CHECK (outcome IN ('success', 'failure')),
  CONSTRAINT runs_status_known CHECK (status IN ('ok', 'warn', 'critical')),
  CONSTRAINT runs_success_has_report CHECK (
    (outcome = 'success' AND report IS NOT NULL AND status IS NOT NULL AND error IS NULL)
    OR (outcome = 'failure' AND report IS NULL AND status IS NULL AND error IS NOT NULL)
  ),
  -- NaN compares greater than every number in PostgreSQL, so this also refuses NaN.
  CONSTRAINT runs_duration_finite CHECK (duration_seconds > '-Infinity' AND duration_seconds < 'Infinity')
);

COMMENT ON TABLE runs IS 'One row per attempted evaluation of a snapshot date; the newest success of a date holds its report.';

-- Newest success of a date, newest evaluated date, dates in a range.
CREATE INDEX runs_success_by_date ON runs (run_date DESC, id DESC) WHERE outcome = 'success';
-- Health on start: the newest finished run.
CREATE INDEX runs_by_finish ON runs (finished_at DESC, id DESC);

-- findings: the current findings of each evaluated date, one set per date.
-- Saving a run deletes the date's set and inserts the new one in the same
-- transaction, so a re-run or back-fill replaces a date's findings atomically.
CREATE TABLE findings (
  run_date         date NOT NULL,
  -- The run these findings came from.
  run_id           bigint NOT NULL REFERENCES runs (id) ON DELETE CASCADE,
  -- Position in the report's findings array, so the order is kept.
  ordinal          integer NOT NULL,
  -- Null for checks on the whole day.
  feature          text,
  check_name       text NOT NULL,
  -- Within-list rule, for rule checks.
  rule             text,
  value            double precision NOT NULL,
  score            double precision NOT NULL,
  status           text NOT NULL,
  -- Alert state after this run (consecutive-run hysteresis).
  alerting         boolean NOT NULL,
  alert_level      text,
  -- Consecutive runs, ending with this one, at warn or worse / at critical.
  consecutive_runs integer NOT NULL,
  consecutive_critical integer NOT NULL,
  alerting_since   date,
  thresholds       jsonb NOT NULL,
  summary          text NOT NULL,
  evidence         jsonb NOT NULL,
  PRIMARY KEY (run_date, ordinal),
  CONSTRAINT findings_status_known CHECK (status IN ('ok', 'warn', 'critical')),
  CONSTRAINT findings_level_known CHECK (alert_level IN ('warn', 'critical')),
  CONSTRAINT findings_alerting_has_level CHECK (NOT alerting OR alert_level IS NOT NULL),
  CONSTRAINT findings_consecutive_nonnegative CHECK (consecutive_runs >= 0 AND consecutive_critical >= 0),
  -- The JSON report cannot carry NaN or infinities; refuse them here too
  -- (NaN compares greater than every number in PostgreSQL).
  CONSTRAINT findings_value_finite CHECK (value > '-Infinity' AND value < 'Infinity'),
  CONSTRAINT findings_score_finite CHECK (score > '-Infinity' AND score < 'Infinity')
);

COMMENT ON TABLE findings IS 'The current findings of each evaluated date (one set per date, replaced by re-runs).';

-- One finding per (date, feature, check, rule); feature names cannot be empty, so '' stands for null.
CREATE UNIQUE INDEX findings_one_per_key ON findings (run_date, (coalesce(feature, '')), check_name, (coalesce(rule, '')));
-- History of one finding for charts.
CREATE INDEX findings_history ON findings (check_name, feature, run_date);
CREATE INDEX findings_by_run ON findings (run_id);

-- alert_state: per feature/check/rule, the alert state after the newest
-- evaluated date. Only a run of the newest date rewrites it; back-fills of older
-- dates leave it alone.
CREATE TABLE alert_state (
  feature          text,
  check_name       text NOT NULL,
  rule             text,
  status           text NOT NULL,
  consecutive_runs integer NOT NULL,
  consecutive_critical integer NOT NULL,
  alerting         boolean NOT NULL,
  alert_level      text,
  since            date,
  -- The date whose run produced this state.
  last_run_date    date NOT NULL,
  updated_at       timestamptz NOT NULL DEFAULT now(),
  CONSTRAINT alert_state_status_known CHECK (status IN ('ok', 'warn', 'critical')),
  CONSTRAINT alert_state_level_known CHECK (alert_level IN ('warn', 'critical')),
  CONSTRAINT alert_state_consecutive_nonnegative CHECK (consecutive_runs >= 0 AND consecutive_critical >= 0)
);

COMMENT ON TABLE alert_state IS 'Alert state per feature/check/rule after the newest evaluated date.';

CREATE UNIQUE INDEX alert_state_one_per_key ON alert_state ((coalesce(feature, '')), check_name, (coalesce(rule, '')));

-- baselines: one profile per baseline fingerprint (window and config), computed
-- once and reused by every daily run. The profile is JSON without the value
-- samples, which live in baseline_samples as raw float64.
CREATE TABLE baselines (
  id          bigint GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
  fingerprint text NOT NULL UNIQUE,
  window_type text NOT NULL,
  window_from date NOT NULL,
  window_to   date NOT NULL,
  sample_size integer NOT NULL,
  -- When the profile was computed (from the profile) and last written here.
  created_at  timestamptz NOT NULL,
  saved_at    timestamptz NOT NULL DEFAULT now(),
  profile     jsonb NOT NULL,
  CONSTRAINT baselines_window_ordered CHECK (window_from <= window_to)
);

COMMENT ON TABLE baselines IS 'Baseline profiles by fingerprint; value samples are in baseline_samples.';

-- baseline_samples: each numeric feature's sorted baseline sample, as
-- little-endian IEEE 754 float64 values packed back to back (8 bytes each).
-- bytea keeps every bit (-0, subnormals) and is a fraction of the JSON size.
CREATE TABLE baseline_samples (
  baseline_id bigint NOT NULL REFERENCES baselines (id) ON DELETE CASCADE,
  feature     text NOT NULL,
  value_count integer NOT NULL,
  sample      bytea NOT NULL,
  PRIMARY KEY (baseline_id, feature),
  CONSTRAINT baseline_samples_length CHECK (value_count >= 0 AND length(sample) = 8 * value_count)
);

COMMENT ON TABLE baseline_samples IS 'Sorted baseline sample per feature: little-endian float64, 8 bytes per value.';
