/**
 * Benchmark of the statistics unit. Prints figures; asserts nothing.
 *
 *   npx tsx tests/bench/stats.bench.ts
 *
 * Each figure is the median of several repetitions after one warm-up run, on fresh copies of
 * the same seeded data, so runs are comparable between machines and commits.
 */
import os from 'node:os';
import { pathToFileURL } from 'node:url';
import {
  binCounts,
  binCountsSorted,
  binEdgesFromSorted,
  ks2,
  ks2ExactSurvival,
  ks2Sorted,
  psi,
  radixSortedCopy,
} from '../../src/stats/index.ts';
import { mulberry32, normalSample } from '../unit/stats/prng.ts';

export interface BenchFigure {
  name: string;
  /** median wall time of one call, milliseconds */
  ms: number;
  /** median CPU time (user + system) of one call, milliseconds: close to the wall time of an idle machine when the machine is shared */
  cpuMs: number;
  /** values processed per call (0 when not meaningful) */
  values: number;
  /** ms * 1e6 / values */
  nsPerValue: number | null;
}

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)];
}

interface Timing {
  wall: number;
  cpu: number;
}

/** Runs `fn` once to warm up, then `reps` times; returns the median wall and CPU times in ms. */
function time(reps: number, setup: () => void, fn: () => unknown): Timing {
  const walls: number[] = [];
  const cpus: number[] = [];
  let sink = 0;
  for (let r = 0; r <= reps; r++) {
    setup();
    const c0 = process.cpuUsage();
    const t0 = performance.now();
    const out = fn();
    const t1 = performance.now();
    const c1 = process.cpuUsage(c0);
    if (typeof out === 'number') sink += out;
    if (r > 0) {
      walls.push(t1 - t0);
      cpus.push((c1.user + c1.system) / 1000);
    }
  }
  if (Number.isNaN(sink)) console.log('(sink)');
  return { wall: median(walls), cpu: median(cpus) };
}

export function main(): BenchFigure[] {
  const N = 1_000_000;
  const figures: BenchFigure[] = [];
  const add = (name: string, t: Timing, values: number, calls = 1): void => {
    const ms = t.wall / calls;
    figures.push({ name, ms, cpuMs: t.cpu / calls, values, nsPerValue: values > 0 ? (ms * 1e6) / values : null });
  };

  const a = normalSample(1, N);
  const b = normalSample(2, N, { shift: 0.01 });
  const sa = a.slice().sort();
  const sb = b.slice().sort();

  add('ks2 (radix-sorted copies + merge + p), 2 x 1M', time(5, () => {}, () => ks2(a, b).d), 2 * N);
  add('same with Float64Array.prototype.sort, 2 x 1M', time(5, () => {}, () => ks2Sorted(a.slice().sort(), b.slice().sort()).d), 2 * N);
  let ca = a.slice();
  add('Float64Array sort alone, 1M', time(5, () => { ca = a.slice(); }, () => ca.sort()[0]), N);
  add('radixSortedCopy (radix) alone, 1M', time(5, () => {}, () => radixSortedCopy(a)[0]), N);
  add('ks2Sorted alone (checks + merge), 2 x 1M', time(9, () => {}, () => ks2Sorted(sa, sb).d), 2 * N);

  add('binEdgesFromSorted, 1M sorted, 20 bins', time(9, () => {}, () => binEdgesFromSorted(sa, 20).edges.length), N);
  const spec = binEdgesFromSorted(sa, 20);
  add('binCounts, 1M values, 20 bins', time(9, () => {}, () => binCounts(spec, b)[0]), N);
  add('binCountsSorted, 1M sorted values, 20 bins', time(9, () => {}, () => binCountsSorted(spec, sb)[0]), N);
  const withMass = new Float64Array(N);
  const rand = mulberry32(3);
  for (let i = 0; i < N; i++) withMass[i] = rand() < 0.6 ? 0 : rand();
  const sortedMass = withMass.slice().sort();
  const massSpec = binEdgesFromSorted(sortedMass, 20);
  add('binEdgesFromSorted + binCounts, 1M, 60 % point mass', time(9, () => {}, () => binCounts(binEdgesFromSorted(sortedMass, 20), withMass)[0]), N);
  void massSpec;

  const bc = binCounts(spec, a);
  const cc = binCounts(spec, b);
  const PSI_CALLS = 100_000;
  const psiMs = time(5, () => {}, () => {
    let s = 0;
    for (let k = 0; k < PSI_CALLS; k++) s += psi(bc, cc).psi;
    return s;
  });
  add('psi, 21 bins (one call)', psiMs, 0, PSI_CALLS);

  // Exact p-value at n = m = 10000: near the 5 % critical value (d = 0.0192), at case I of
  // the tests (d = 0.0269, p ~ 1.4e-3), and the worst case d = 1 (whole lattice).
  for (const d of [0.0192, 0.0269, 0.1, 1]) {
    add(`ks2ExactSurvival d=${d}, n = m = 10000`, time(3, () => {}, () => ks2ExactSurvival(d, 10000, 10000)), 0);
  }
  const a10 = a.subarray(0, 10_000);
  const b10 = b.subarray(0, 10_000);
  add("ks2 'auto' (exact) on 10000 x 10000", time(5, () => {}, () => ks2(a10, b10).pValue), 20_000);

  const load = os.loadavg()[0].toFixed(2);
  console.log(`stats benchmark (node ${process.version}, ${os.cpus().length} cores, load average ${load}; median of repeated runs)`);
  console.log(`${'figure'.padEnd(58)} ${'wall ms'.padStart(10)} ${'cpu ms'.padStart(10)} ${'ns/value'.padStart(9)}`);
  for (const f of figures) {
    const digits = f.ms < 1 ? 5 : 1;
    const ns = f.nsPerValue === null ? '' : f.nsPerValue.toFixed(1).padStart(9);
    console.log(`${f.name.padEnd(58)} ${f.ms.toFixed(digits).padStart(10)} ${f.cpuMs.toFixed(digits).padStart(10)} ${ns}`);
  }
  return figures;
}

if (process.argv[1] !== undefined && import.meta.url === pathToFileURL(process.argv[1]).href) {
  main();
}
