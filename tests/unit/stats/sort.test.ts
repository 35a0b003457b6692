import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { halfSortScratchLength, radixSortInPlace, radixSortedCopy } from '../../../src/stats/index.ts';
import { normalSample } from './prng.ts';

function sameBits(a: Float64Array, b: Float64Array): boolean {
  if (a.length !== b.length) return false;
  for (let i = 0; i < a.length; i++) if (!Object.is(a[i], b[i])) return false;
  return true;
}

describe('radixSortedCopy (radix sort)', () => {
  it('doc example: numeric order, -0 before +0, NaN last, input untouched', () => {
    const input = Float64Array.of(3, -0, Number.NaN, -2, 0);
    const out = radixSortedCopy(input);
    expect(Array.from(out)).toEqual([-2, -0, 0, 3, Number.NaN]);
    expect(Object.is(out[1], -0)).toBe(true);
    expect(Object.is(out[2], 0)).toBe(true);
    expect(Object.is(input[1], -0)).toBe(true);
    expect(input[0]).toBe(3);
  });

  it('same order as Float64Array.prototype.sort for any doubles (fast-check), small and radix-sized columns', () => {
    fc.assert(
      fc.property(fc.array(fc.double(), { maxLength: 300 }), (xs) => {
        const v = Float64Array.from(xs);
        expect(sameBits(radixSortedCopy(v), v.slice().sort())).toBe(true);
      }),
      { numRuns: 200, seed: 31 },
    );
    fc.assert(
      fc.property(fc.array(fc.double(), { minLength: 4096, maxLength: 6000 }), (xs) => {
        const v = Float64Array.from(xs);
        expect(sameBits(radixSortedCopy(v), v.slice().sort())).toBe(true);
      }),
      { numRuns: 15, seed: 32 },
    );
  });

  it('same order on large samples: continuous, rounded (narrow range, skipped passes), and NaN bit patterns', () => {
    const big = normalSample(41, 200_000);
    expect(sameBits(radixSortedCopy(big), big.slice().sort())).toBe(true);
    const rounded = normalSample(42, 200_000, { decimals: 1 });
    expect(sameBits(radixSortedCopy(rounded), rounded.slice().sort())).toBe(true);
    // A NaN with the sign bit set (0xFFF8...) still goes last (small and radix paths).
    const many = normalSample(43, 10_000);
    new Uint32Array(many.buffer)[1] = 0xfff80000;
    const ms = radixSortedCopy(many);
    expect(Number.isNaN(ms[9_999])).toBe(true);
    expect(sameBits(ms.subarray(0, 9_999), many.subarray(1).slice().sort())).toBe(true);
    const odd = Float64Array.of(1, 0, -1);
    new Uint32Array(odd.buffer)[1] = 0xfff80000; // value 1 becomes a negative quiet NaN
    new Uint32Array(odd.buffer)[0] = 0;
    const s = radixSortedCopy(odd);
    expect(Array.from(s.subarray(0, 2))).toEqual([-1, 0]);
    expect(Number.isNaN(s[2])).toBe(true);
    expect(radixSortedCopy(new Float64Array(0)).length).toBe(0);
    expect(Array.from(radixSortedCopy(Float64Array.of(Number.NaN, 5)))).toEqual([5, Number.NaN]);
  });
});

describe('radixSortInPlace', () => {
  it('sorts a subarray in place like the built-in sort, with a larger shared scratch, whatever the number of passes', () => {
    const scratch = new Float64Array(20_000);
    // Narrow ranges skip high-digit passes, so the order ends in the column or in the scratch.
    const shapes = [normalSample(1, 9000), Float64Array.from({ length: 9000 }, (_, i) => (i * 7919) % 9000), Float64Array.from(normalSample(2, 9000), (x) => Math.round(x * 100) / 100)];
    for (const values of shapes) {
      const column = new Float64Array(values.length + 10).fill(-1);
      column.set(values, 5);
      const part = column.subarray(5, 5 + values.length);
      const result = radixSortInPlace(part, scratch);
      expect(result).toBe(part);
      expect(sameBits(part, values.slice().sort())).toBe(true);
      // Nothing outside the subarray was touched.
      expect(Array.from(column.subarray(0, 5))).toEqual([-1, -1, -1, -1, -1]);
      expect(Array.from(column.subarray(5 + values.length))).toEqual([-1, -1, -1, -1, -1]);
    }
    expect(Array.from(radixSortInPlace(Float64Array.of(2, -0, 0, -1)))).toEqual([-1, -0, 0, 2]);
  });

  it('sorts with a scratch of half the length (halves sorted apart, then merged), -0 before +0 from either half', () => {
    // Zeros of both signs in both halves, ties across the halves, an odd length.
    const zeros = Float64Array.from({ length: 12_001 }, (_, i) => (i % 5 === 0 ? (i % 3 === 0 ? -0 : 0) : ((i * 7919) % 101) - 50));
    for (const values of [normalSample(4, 9001), zeros, Float64Array.from({ length: 10_000 }, (_, i) => 10_000 - i)]) {
      const scratch = new Float64Array(halfSortScratchLength(values.length));
      expect(scratch.length).toBeLessThan(values.length);
      const part = values.slice();
      expect(radixSortInPlace(part, scratch)).toBe(part);
      expect(sameBits(part, values.slice().sort())).toBe(true);
    }
  });
});
