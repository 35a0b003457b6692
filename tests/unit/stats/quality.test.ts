import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { uniqueCountSorted } from 'simple-statistics';
import {
  MISSING_NULL,
  MISSING_PRESENT,
  MISSING_TYPE_ERROR,
  StatsInputError,
  distinctCountSorted,
  mergeQualityCounts,
  qualityCounts,
} from '../../../src/stats/index.ts';
import type { QualityCounts } from '../../../src/stats/index.ts';

describe('qualityCounts', () => {
  it('doc example: each row in exactly one category, out-of-range among the finite ones', () => {
    const q = qualityCounts(Float64Array.of(1, Number.NaN, Infinity, 5, 0), Uint8Array.of(0, 0, 0, 0, 1), { max: 4 });
    expect(q).toEqual({ rows: 5, nulls: 1, nan: 1, posInf: 1, negInf: 0, typeErrors: 0, outOfRange: 1, finite: 2 });
  });

  it('missing codes: null and type error rows are not looked at; missing may be null', () => {
    const values = Float64Array.of(Number.NaN, Number.NaN, 3, -Infinity, 7);
    const codes = Uint8Array.of(MISSING_NULL, MISSING_TYPE_ERROR, MISSING_PRESENT, MISSING_PRESENT, MISSING_TYPE_ERROR);
    expect(qualityCounts(values, codes)).toEqual({
      rows: 5, nulls: 1, nan: 0, posInf: 0, negInf: 1, typeErrors: 2, outOfRange: 0, finite: 1,
    });
    expect(qualityCounts(values, null)).toEqual({
      rows: 5, nulls: 0, nan: 2, posInf: 0, negInf: 1, typeErrors: 0, outOfRange: 0, finite: 2,
    });
  });

  it('range bounds are inclusive and optional; infinities are non-finite, never out of range', () => {
    const v = Float64Array.of(-1, 0, 0.5, 1, 2, Infinity, -Infinity);
    expect(qualityCounts(v, null, { min: 0, max: 1 }).outOfRange).toBe(2);
    expect(qualityCounts(v, null, { min: 0 }).outOfRange).toBe(1);
    expect(qualityCounts(v, null, { max: 1 }).outOfRange).toBe(1);
    expect(qualityCounts(v, null).outOfRange).toBe(0);
    const q = qualityCounts(v, null, { min: 0, max: 1 });
    expect(q.posInf).toBe(1);
    expect(q.negInf).toBe(1);
  });

  it('partition property and merge additivity (fast-check)', () => {
    const cell = fc.tuple(
      fc.oneof(fc.double({ min: -10, max: 10 }), fc.constantFrom(Number.NaN, Infinity, -Infinity)),
      fc.constantFrom(0, 0, 0, 1, 2),
    );
    fc.assert(
      fc.property(fc.array(cell, { maxLength: 80 }), fc.array(cell, { maxLength: 80 }), (xs, ys) => {
        const make = (cells: [number, number][]): QualityCounts =>
          qualityCounts(Float64Array.from(cells.map((c) => c[0])), Uint8Array.from(cells.map((c) => c[1])), { min: -5, max: 5 });
        const a = make(xs);
        const b = make(ys);
        expect(a.nulls + a.typeErrors + a.nan + a.posInf + a.negInf + a.finite).toBe(a.rows);
        expect(a.outOfRange).toBeLessThanOrEqual(a.finite);
        expect(mergeQualityCounts(a, b)).toEqual(make([...xs, ...ys]));
      }),
      { numRuns: 200, seed: 17 },
    );
  });

  it('throws on invalid input', () => {
    expect(() => qualityCounts(new Float64Array(3), new Uint8Array(2))).toThrow(/missing codes for every row/);
    expect(() => qualityCounts(new Float64Array(1), Uint8Array.of(3))).toThrow(/missing codes 0, 1 or 2/);
    expect(() => qualityCounts(new Float64Array(1), null, { min: 2, max: 1 })).toThrow(StatsInputError);
    expect(() => qualityCounts(new Float64Array(1), null, { min: Number.NaN })).toThrow(StatsInputError);
  });
});

describe('distinctCountSorted', () => {
  it('counts runs; -0 and 0 are one value; NaNs (sorted last) count once', () => {
    expect(distinctCountSorted(Float64Array.of(0, 0, 1, 2, 2))).toBe(3);
    expect(distinctCountSorted(new Float64Array(0))).toBe(0);
    expect(distinctCountSorted(Float64Array.of(-0, 0))).toBe(1);
    expect(distinctCountSorted(Float64Array.of(1, 2, Number.NaN, Number.NaN).sort())).toBe(3);
  });

  it('agrees with simple-statistics 7.12.1 uniqueCountSorted on sorted finite data (fast-check)', () => {
    fc.assert(
      fc.property(fc.array(fc.integer({ min: -30, max: 30 }), { maxLength: 200 }), (xs) => {
        const s = Float64Array.from(xs).sort();
        expect(distinctCountSorted(s)).toBe(uniqueCountSorted(Array.from(s)));
      }),
      { numRuns: 200, seed: 19 },
    );
  });

  it('throws on unsorted input', () => {
    expect(() => distinctCountSorted(Float64Array.of(2, 1))).toThrow(/sorted ascending/);
    expect(() => distinctCountSorted(Float64Array.of(Number.NaN, 1))).toThrow(StatsInputError);
  });
});
