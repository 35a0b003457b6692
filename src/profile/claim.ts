/**
 * The unit of work the profiling threads share: a day's numeric features, taken one at a time
 * from a counter in shared memory (Atomics), by this thread and the workers alike.
 */
import type { Config } from '../config/index.ts';
import type { BinSpec } from '../stats/index.ts';
import { SortScratch, numericProfile } from './day.ts';
import type { ListGrouping, NumericProfile } from './types.ts';

export interface ProfileJob {
  values: Float64Array;
  missing: Uint8Array | null;
  feature: Config['features'][number];
  bins: BinSpec | undefined;
}

export interface ProfileRequest {
  lists: number;
  grouping: ListGrouping;
  /** A slice's rows in the day's columns (DayColumns.parentRows), or null. */
  parentRows: Int32Array | null;
  /** A slice's value cap (DayColumns.valueCap), or undefined. */
  valueCap: number | undefined;
  jobs: ProfileJob[];
  /** next[0]: the index of the next job nobody has taken. */
  next: Int32Array;
}

/** Profiles jobs taken from the shared counter until none is left; returns [job index, profile] pairs. */
export function profileClaimed(req: ProfileRequest): [number, NumericProfile][] {
  const scratch = new SortScratch();
  const out: [number, NumericProfile][] = [];
  for (;;) {
    const k = Atomics.add(req.next, 0, 1);
    if (k >= req.jobs.length) return out;
    const j = req.jobs[k]!;
    out.push([k, numericProfile(j.values, j.missing, req.lists, req.grouping, j.feature, j.bins, scratch, req.parentRows, req.valueCap)]);
  }
}
