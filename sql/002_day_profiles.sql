-- day_profiles: the mergeable profile of each evaluated or baseline day (counts and a
-- capped, sorted value sample per feature), keyed by the profile fingerprint (the parts
-- of the config that change a profile). A baseline window is the merge of its days'
-- profiles, so a daily run reads only its new day from the source.
-- Aggregates only: no list or item ids.
CREATE TABLE day_profiles (
  fingerprint   text NOT NULL,
  snapshot_date date NOT NULL,
  total_rows    bigint NOT NULL,
  saved_at      timestamptz NOT NULL DEFAULT now(),
  -- src/profile/types.ts DayProfile, encoded by src/store/codec.ts (typed arrays tagged).
  profile       jsonb NOT NULL,
  PRIMARY KEY (fingerprint, snapshot_date),
  CONSTRAINT day_profiles_rows_nonnegative CHECK (total_rows >= 0)
);

COMMENT ON TABLE day_profiles IS 'Mergeable profile per snapshot date and profile fingerprint; baselines are merged from them.';
