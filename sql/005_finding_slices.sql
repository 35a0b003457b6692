-- Slices (src/profile/slices.ts): a finding may be about a row subset of the day (the top
-- positions of every list, one value of a segment column) rather than the whole day. The
-- slice is part of a finding's key and of its alert state; 'all' is the whole day, which
-- is what every finding stored before this migration was about.
--
-- Segment values are data: a slice name holds at most 64 characters of one (see
-- src/report/contract.ts Finding.slice), so the key stays bounded.

ALTER TABLE findings ADD COLUMN slice text NOT NULL DEFAULT 'all';
DROP INDEX findings_one_per_key;
CREATE UNIQUE INDEX findings_one_per_key ON findings (run_date, slice, (coalesce(feature, '')), check_name, (coalesce(rule, '')));

ALTER TABLE alert_state ADD COLUMN slice text NOT NULL DEFAULT 'all';
DROP INDEX alert_state_one_per_key;
CREATE UNIQUE INDEX alert_state_one_per_key ON alert_state (slice, (coalesce(feature, '')), check_name, (coalesce(rule, '')));
