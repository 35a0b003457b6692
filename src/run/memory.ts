/**
 * How much memory a run needs at the config's cap, so that a deployment's memory limit can
 * be set from the config (`plumbline check-config` prints it). An upper estimate:
 *
 *   bytes = 160 MiB + rows x (16 x features + 72) + 8 x baseline.sampleSize x features
 *
 * - 160 MiB: Node, the pools, the code, the HTTP server;
 * - per row: 8 bytes per feature for its column and 8 for the sorted copy made while the
 *   column is profiled, plus 32 bytes of per-row structure (list index, item hash,
 *   position, label) and 40 of the served order the ranking checks use (profile/association.ts:
 *   row, position, its rank, served rank, score and its rank);
 * - the baseline's value sample, 8 bytes per value and feature.
 *
 * `rows` is `source.maxRowsPerDay` for the stream engine and the day's value sample for
 * pushdown (whose aggregates are a few kilobytes). Fitted to the peaks of tests/bench/run.bench.ts
 * (250k-1M rows x 50 features: 408-902 MiB measured against 435-1030 MiB estimated) and of
 * pushdown.bench.ts (183 MiB measured against 247 MiB), rounded up.
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
  const bytes = MEMORY_BASE_BYTES + rows * (16 * features + 72) + 8 * config.baseline.sampleSize * features;
  return { rows, features, bytes };
}
