/**
 * Worker thread entry: profiles its share of a day's numeric features. The columns arrive
 * as typed arrays over SharedArrayBuffers (no copy); the sorted samples go back as
 * transferred buffers.
 */
import { parentPort } from 'node:worker_threads';
import type { Config } from '../config/index.ts';
import type { BinSpec } from '../stats/index.ts';
import { numericProfile, type ListGrouping } from './day.ts';

export interface ProfileRequest {
  lists: number;
  grouping: ListGrouping;
  jobs: { values: Float64Array; missing: Uint8Array | null; feature: Config['features'][number]; bins: BinSpec | undefined }[];
}

parentPort?.on('message', (req: ProfileRequest) => {
  try {
    const profiles = req.jobs.map((j) => numericProfile(j.values, j.missing, req.lists, req.grouping, j.feature, j.bins));
    parentPort!.postMessage({ ok: true, profiles }, profiles.map((p) => p.sortedSample.buffer as ArrayBuffer));
  } catch (err) {
    parentPort!.postMessage({ ok: false, error: err instanceof Error ? err.message : String(err) });
  }
});
