/**
 * Worker thread entry: profiles its share of a day's numeric features. The columns arrive
 * as typed arrays over SharedArrayBuffers (no copy) and are sorted in place into the
 * profiles' sorted samples, which go back over the same shared memory.
 */
import { parentPort } from 'node:worker_threads';
import type { Config } from '../config/index.ts';
import type { BinSpec } from '../stats/index.ts';
import { SortScratch, numericProfile, type ListGrouping } from './day.ts';

export interface ProfileRequest {
  lists: number;
  grouping: ListGrouping;
  /** A slice's rows in the day's columns (DayColumns.parentRows), or null. */
  parentRows: Int32Array | null;
  jobs: { values: Float64Array; missing: Uint8Array | null; feature: Config['features'][number]; bins: BinSpec | undefined }[];
}

parentPort?.on('message', (req: ProfileRequest) => {
  try {
    const scratch = new SortScratch();
    const profiles = req.jobs.map((j) => numericProfile(j.values, j.missing, req.lists, req.grouping, j.feature, j.bins, scratch, req.parentRows));
    // A column on an ordinary buffer (not shared) is handed back rather than copied.
    const owned = profiles
      .flatMap((p) => [p.sortedSample.buffer, p.perList?.flags.buffer, p.perList?.positionRho?.buffer, p.perList?.scoreRho?.buffer])
      .filter((b): b is ArrayBuffer => b instanceof ArrayBuffer);
    parentPort!.postMessage({ ok: true, profiles }, [...new Set(owned)]);
  } catch (err) {
    parentPort!.postMessage({ ok: false, error: err instanceof Error ? err.message : String(err) });
  }
});
