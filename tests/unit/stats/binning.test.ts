import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import {
  StatsInputError,
  assignBin,
  binCount,
  binCounts,
  binCountsSorted,
  binEdgesFromSorted,
  binLabels,
} from '../../../src/stats/index.ts';
import type { BinSpec } from '../../../src/stats/index.ts';
import { normalSample } from './prng.ts';

interface Interval {
  lo: number;
  hi: number;
  loClosed: boolean;
  hiClosed: boolean;
}

/** The bins of a spec as explicit intervals, written from the BinSpec documentation. */
function intervalsOf(spec: BinSpec): Interval[] {
  const out: Interval[] = [];
  let prev = -Infinity;
  spec.edges.forEach((e, i) => {
    if (spec.pointMass[i]) {
      out.push({ lo: prev, hi: e, loClosed: false, hiClosed: false }, { lo: e, hi: e, loClosed: true, hiClosed: true });
    } else {
      out.push({ lo: prev, hi: e, loClosed: false, hiClosed: true });
    }
    prev = e;
  });
  out.push({ lo: prev, hi: Infinity, loClosed: false, hiClosed: false });
  return out;
}

function contains(iv: Interval, x: number): boolean {
  // -Infinity belongs to the first bin and +Infinity to the last (documented).
  if (x === -Infinity) return iv.lo === -Infinity;
  if (x === Infinity) return iv.hi === Infinity;
  const aboveLo = iv.loClosed ? x >= iv.lo : x > iv.lo;
  const belowHi = iv.hiClosed ? x <= iv.hi : x < iv.hi;
  return aboveLo && belowHi;
}

const sorted = (xs: number[]): Float64Array => Float64Array.from(xs).sort();

describe('binEdgesFromSorted', () => {
  it('continuous data: edges are the inverse-ECDF quantiles (numpy method="inverted_cdf")', () => {
    // NumPy 2.4.6: np.quantile(np.sort(x), [j/10 for j in 1..9], method='inverted_cdf') on
    // the same generated sample (Hyndman & Fan 1996 definition 1). Largest tie count is 9 of
    // 1000 < 1000/10, so there is no point mass and the ties just merge into the edges.
    const x = normalSample(55, 1000, { decimals: 2 }).sort();
    const spec = binEdgesFromSorted(x, 10);
    expect(spec.edges).toEqual([-1.43, -0.9, -0.53, -0.23, 0.04, 0.27, 0.57, 0.92, 1.34]);
    expect(spec.pointMass.every((p) => !p)).toBe(true);
    expect(binCount(spec)).toBe(10);
    // Each right-closed bin holds at least 1/10 of the baseline at its upper edge (ECDF >= j/10).
    const counts = binCounts(spec, x);
    let cum = 0;
    for (let j = 0; j < 9; j++) {
      cum += counts[j];
      expect(cum).toBeGreaterThanOrEqual(100 * (j + 1));
    }

    // NumPy 2.4.6, same call with 7 bins on an unrounded sample of 997 values.
    const y = normalSample(56, 997).sort();
    expect(binEdgesFromSorted(y, 7).edges).toEqual([
      -1.1129773173015565, -0.6149878620635718, -0.23481931979767978, 0.14066375512629747, 0.5517220753245056,
      1.0516994635108858,
    ]);
  });

  it('doc example: a point mass at 0 gets its own bin and an open interval before it', () => {
    const spec = binEdgesFromSorted(sorted([0, 0, 0, 0, 0, 0, 1, 2, 3, 4]), 4);
    // Hand-derived: n = 10, 0 holds 6 >= 10/4 (point mass); quantiles at ceil(10 j / 4) =
    // 3, 5, 8 -> values 0, 0, 2; merged edges [0, 2].
    expect(spec).toEqual({ edges: [0, 2], pointMass: [true, false] });
    expect(binLabels(spec)).toEqual(['(-inf, 0)', '[0, 0]', '(0, 2]', '(2, +inf)']);
    expect(Array.from(binCounts(spec, sorted([0, 0, 0, 0, 0, 0, 1, 2, 3, 4])))).toEqual([0, 6, 2, 2]);
  });

  it('a column that is 90 % zeros: the zero share is a bin of its own, so its change is visible', () => {
    const base = new Float64Array(1000);
    for (let i = 900; i < 1000; i++) base[i] = (i - 899) / 100; // 0.01 .. 1.00
    const spec = binEdgesFromSorted(base, 10);
    // Every decile of the baseline is 0; plain decile bins would be a single (-inf, 0] bin.
    expect(spec).toEqual({ edges: [0], pointMass: [true] });
    expect(Array.from(binCounts(spec, base))).toEqual([0, 900, 100]);
    const current = new Float64Array(1000);
    for (let i = 800; i < 1000; i++) current[i] = 0.5;
    expect(Array.from(binCounts(spec, current))).toEqual([0, 800, 200]);
  });

  it('a point mass inside continuous data, and one at the maximum', () => {
    // 300 values of 5 among 700 distinct others, 10 bins: 5 holds 30 % >= 10 %.
    const xs: number[] = [];
    for (let i = 0; i < 700; i++) xs.push(i / 100); // 0 .. 6.99, contains 5 once
    for (let i = 0; i < 300; i++) xs.push(5);
    const spec = binEdgesFromSorted(sorted(xs), 10);
    const k = spec.edges.indexOf(5);
    expect(k).toBeGreaterThan(0);
    expect(spec.pointMass[k]).toBe(true);
    expect(spec.pointMass.filter(Boolean).length).toBe(1);
    expect(assignBin(spec, 5)).toBe(k + 1); // singleton right after the open interval before it
    expect(assignBin(spec, 4.999)).toBe(k);
    expect(assignBin(spec, 5.001)).toBe(k + 2);

    // The maximum 9 holds 20 %: it is not a quantile edge j/10 for j < 10, so it is added.
    const ys: number[] = [];
    for (let i = 0; i < 80; i++) ys.push(i);
    for (let i = 0; i < 20; i++) ys.push(100);
    const top = binEdgesFromSorted(sorted(ys), 10);
    expect(top.edges[top.edges.length - 1]).toBe(100);
    expect(top.pointMass[top.pointMass.length - 1]).toBe(true);
    const c = binCounts(top, sorted(ys));
    expect(c[c.length - 2]).toBe(20); // [100, 100]
    expect(c[c.length - 1]).toBe(0); // (100, +inf): empty in the baseline
  });

  it('low cardinality: each distinct value is a point mass, open intervals catch unseen values', () => {
    const spec = binEdgesFromSorted(sorted([1, 0, 0, 1, 1, 0, 1]), 10);
    expect(spec).toEqual({ edges: [0, 1], pointMass: [true, true] });
    expect(binCount(spec)).toBe(5);
    expect(binLabels(spec)).toEqual(['(-inf, 0)', '[0, 0]', '(0, 1)', '[1, 1]', '(1, +inf)']);
    expect(Array.from(binCounts(spec, Float64Array.of(-1, 0, 0.5, 1, 2, 1)))).toEqual([1, 1, 1, 2, 1]);
    // Exactly `bins` distinct values still counts as low cardinality.
    const five = binEdgesFromSorted(sorted([1, 2, 3, 4, 5, 5, 5]), 5);
    expect(five.pointMass).toEqual([true, true, true, true, true]);
  });

  it('ties merged: edges are strictly increasing', () => {
    const x = normalSample(57, 5000, { scale: 2, decimals: 0 }).sort(); // ~13 integer values
    const spec = binEdgesFromSorted(x, 20);
    for (let i = 1; i < spec.edges.length; i++) expect(spec.edges[i]).toBeGreaterThan(spec.edges[i - 1]);
    const heavy = binEdgesFromSorted(normalSample(58, 5000, { scale: 3, decimals: 0 }).sort(), 8);
    for (let i = 1; i < heavy.edges.length; i++) expect(heavy.edges[i]).toBeGreaterThan(heavy.edges[i - 1]);
  });

  it('empty sample: one bin covering everything', () => {
    const spec = binEdgesFromSorted(new Float64Array(0), 10);
    expect(spec).toEqual({ edges: [], pointMass: [] });
    expect(binCount(spec)).toBe(1);
    expect(binLabels(spec)).toEqual(['(-inf, +inf)']);
    expect(assignBin(spec, -Infinity)).toBe(0);
    expect(assignBin(spec, 3)).toBe(0);
    expect(Array.from(binCounts(spec, Float64Array.of(1, Number.NaN, Infinity)))).toEqual([2]);
  });

  it('-0 and 0 are one value', () => {
    const spec = binEdgesFromSorted(sorted([-0, 0, 0, 1]), 4);
    expect(spec.edges).toEqual([0, 1]);
    expect(Object.is(spec.edges[0], 0)).toBe(true);
    expect(assignBin(spec, -0)).toBe(1);
  });

  it('throws on invalid input', () => {
    expect(() => binEdgesFromSorted(Float64Array.of(2, 1), 4)).toThrow(/sorted ascending/);
    expect(() => binEdgesFromSorted(Float64Array.of(1, Number.NaN), 4)).toThrow(StatsInputError);
    expect(() => binEdgesFromSorted(Float64Array.of(1, Infinity), 4)).toThrow(/finite/);
    expect(() => binEdgesFromSorted(Float64Array.of(1, 2), 0)).toThrow(/bins/);
    expect(() => binEdgesFromSorted(Float64Array.of(1, 2), 2.5)).toThrow(/bins/);
    expect(() => binCount({ edges: [1, 1], pointMass: [false, false] })).toThrow(/strictly increasing/);
    expect(() => binCount({ edges: [1, 2], pointMass: [false] })).toThrow(/same length/);
    expect(() => binCounts({ edges: [Number.NaN], pointMass: [false] }, new Float64Array(1))).toThrow(/finite/);
    expect(() => assignBin({ edges: [1], pointMass: [false] }, Number.NaN)).toThrow(StatsInputError);
  });
});

describe('assignBin and binCounts properties (fast-check)', () => {
  const sampleArb = fc.array(fc.integer({ min: -20, max: 20 }).map((v) => v / 4), { maxLength: 200 });
  const probeArb = fc.array(
    fc.oneof(
      fc.integer({ min: -25, max: 25 }).map((v) => v / 4),
      fc.double({ min: -10, max: 10, noNaN: true }),
      fc.constantFrom(-Infinity, Infinity),
    ),
    { minLength: 1, maxLength: 50 },
  );

  it('each value lands in the one interval that contains it under the documented closed sides', () => {
    fc.assert(
      fc.property(sampleArb, fc.integer({ min: 1, max: 12 }), probeArb, (xs, bins, probes) => {
        const spec = binEdgesFromSorted(sorted(xs), bins);
        const ivs = intervalsOf(spec);
        expect(binCount(spec)).toBe(ivs.length);
        for (const x of probes) {
          const holders = ivs.flatMap((iv, i) => (contains(iv, x) ? [i] : []));
          expect(holders.length).toBe(1);
          expect(assignBin(spec, x)).toBe(holders[0]);
        }
      }),
      { numRuns: 300, seed: 11 },
    );
  });

  it('binCounts sums to the number of finite values (NaN is left to the caller)', () => {
    fc.assert(
      fc.property(
        sampleArb,
        fc.integer({ min: 1, max: 12 }),
        fc.array(fc.oneof(fc.double({ min: -10, max: 10, noNaN: true }), fc.constant(Number.NaN)), { maxLength: 100 }),
        (xs, bins, values) => {
          const spec = binEdgesFromSorted(sorted(xs), bins);
          const counts = binCounts(spec, Float64Array.from(values));
          const total = counts.reduce((s, v) => s + v, 0);
          expect(total).toBe(values.filter((v) => Number.isFinite(v)).length);
          expect(counts.length).toBe(binCount(spec));
        },
      ),
      { numRuns: 200, seed: 12 },
    );
  });

  it('binCountsSorted equals binCounts on the sorted values', () => {
    fc.assert(
      fc.property(
        sampleArb,
        fc.integer({ min: 1, max: 12 }),
        fc.array(
          fc.oneof(
            fc.integer({ min: -25, max: 25 }).map((v) => v / 4),
            fc.double({ min: -10, max: 10, noNaN: true }),
            fc.constantFrom(-Infinity, Infinity, Number.NaN, -0),
          ),
          { maxLength: 100 },
        ),
        (xs, bins, values) => {
          const spec = binEdgesFromSorted(sorted(xs), bins);
          const v = Float64Array.from(values).sort();
          expect(Array.from(binCountsSorted(spec, v))).toEqual(Array.from(binCounts(spec, v)));
        },
      ),
      { numRuns: 300, seed: 14 },
    );
    expect(() => binCountsSorted({ edges: [1], pointMass: [false] }, Float64Array.of(2, 1))).toThrow(/sorted ascending/);
    expect(() => binCountsSorted({ edges: [1], pointMass: [false] }, Float64Array.of(1, Number.NaN, 2))).toThrow(StatsInputError);
    expect(Array.from(binCountsSorted({ edges: [0.5], pointMass: [false] }, Float64Array.of(0, 0.5, 1, Number.NaN)))).toEqual([2, 1]);
  });

  it('baseline counts: every interval bin holds at most ceil(n / bins) values plus the ties of its upper edge', () => {
    fc.assert(
      fc.property(fc.array(fc.double({ min: -5, max: 5, noNaN: true }), { minLength: 1, maxLength: 300 }), fc.integer({ min: 2, max: 10 }), (xs, bins) => {
        const x = sorted(xs);
        const spec = binEdgesFromSorted(x, bins);
        const counts = binCounts(spec, x);
        expect(counts.reduce((s, v) => s + v, 0)).toBe(x.length);
        // Interval (q_{j-1}, q_j] holds the ranks ceil(n (j-1) / B) + 1 .. ceil(n j / B) plus
        // the other copies of q_j (a run shorter than n / B, or q_j would be a point mass).
        let maxRun = 1;
        let run = 1;
        for (let i = 1; i < x.length; i++) {
          run = x[i] === x[i - 1] ? run + 1 : 1;
          if (run > maxRun) maxRun = run;
        }
        const ivs = intervalsOf(spec);
        ivs.forEach((iv, i) => {
          if (iv.lo !== iv.hi) expect(counts[i]).toBeLessThanOrEqual(Math.ceil(x.length / bins) + maxRun - 1);
        });
      }),
      { numRuns: 200, seed: 13 },
    );
  });
});
