/**
 * `npm run bench`: every benchmark in turn; each prints its own figures. The targets, run, pushdown
 * and store benchmarks need a PostgreSQL server (PLUMBLINE_BENCH_DATABASE_URL or
 * PLUMBLINE_TEST_DATABASE_URL) and says so when there is none.
 */
import { main as statsBench } from './stats.bench.ts';
import { main as runBench } from './run.bench.ts';
import { main as pushdownBench } from './pushdown.bench.ts';
import { main as rankingBench } from './ranking.bench.ts';
import { main as trustBench } from './trust.bench.ts';
import { main as storeBench } from './store.bench.ts';
import { main as targetsBench } from './targets.bench.ts';
import { main as slicesBench } from './slices.bench.ts';

console.log('== statistics (tests/bench/stats.bench.ts)');
statsBench();
console.log('');
console.log('== the performance targets as ratios measured in one run, and where the time goes (tests/bench/targets.bench.ts)');
await targetsBench();
console.log('');
console.log('== a daily run against PostgreSQL (tests/bench/run.bench.ts)');
await runBench();
console.log('');
console.log('== the pushdown engine: one server, two shards, memory as the day grows (tests/bench/pushdown.bench.ts)');
await pushdownBench();
console.log('');
console.log('== the ranking checks: stream profile with and without, pushdown ranking pass (tests/bench/ranking.bench.ts)');
await rankingBench();
console.log('== warnings on clean days and shifts caught, fixed and adaptive thresholds (tests/bench/trust.bench.ts)');
await trustBench();
console.log('');
console.log('== the store over 90 daily runs, with and without retention (tests/bench/store.bench.ts)');
await storeBench();
console.log('');
console.log('== slices: a day with and without a top-k slice and a segment column (tests/bench/slices.bench.ts)');
await slicesBench();
