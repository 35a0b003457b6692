/**
 * How much memory a run needs at the config's cap, so that a deployment's memory limit can
 * be set from the config (`plumbline check-config` prints it). An upper estimate:
 *
 *   bytes = 160 MiB + rows x (8 x features + 72) + 8 x baseline.sampleSize x features
 *           + with slices: rows x 72 + 8 x slices x features x (slices.valuesPerDay + slices.sampleSize)
 *
 * - 160 MiB: Node, the pools, the code, the HTTP server;
 * - per row: 8 bytes per feature for its column, which is sorted in place into the feature's
 *   sorted sample (profile/day.ts), plus 72 bytes of per-row structure: list index, item hash,
 *   position, label and the list grouping (28), the served order of the ranking checks (20),
 *   the sort scratch of up to four threads (16) and the COPY reader's buffers;
 * - the baseline's value sample, 8 bytes per value and feature;
 * - slices (at most topK.length + the sum of maxValues + 1 over the segment columns): the
 *   row-level columns of the slice being profiled and each thread's gathered feature (72 bytes
 *   a row), and per slice and feature its sorted sample of the day and its baseline's sample.
 *
 * `rows` is `source.maxRowsPerDay` for the stream engine and the day's value sample for
 * pushdown (whose aggregates are a few kilobytes). Checked against the peaks of
 * tests/bench/targets.bench.ts and slices.bench.ts (1M rows x 50 features: 588 MiB measured
 * against 686 MiB estimated; with a top-10 slice and a five-value segment column 847 MiB
 * against 1,029 MiB) and of pushdown.bench.ts (10 features: 131-158 MiB measured against 178 MiB).
 */
import type { Config } from '../config/index.ts';
import { daySampleCap } from './run-day.ts';

export const MEMORY_BASE_BYTES = 160 * 1024 * 1024;

export interface MemoryEstimate {
  /** Rows of one day held at once at the cap. */
  rows: number;
  features: number;
  bytes: number;
}

export function memoryEstimate(config: Config): MemoryEstimate {
  const features = config.features.length;
  const rows = config.source.engine === 'pushdown' ? daySampleCap(config) : config.source.maxRowsPerDay;
  const { topK, segments, valuesPerDay, sampleSize } = config.slices;
  const slices = topK.length + segments.reduce((n, s) => n + s.maxValues + 1, 0);
  const sliceBytes = slices === 0 ? 0 : rows * 72 + 8 * slices * features * (valuesPerDay + sampleSize);
  const bytes = MEMORY_BASE_BYTES + rows * (8 * features + 72) + 8 * config.baseline.sampleSize * features + sliceBytes;
  return { rows, features, bytes };
}
