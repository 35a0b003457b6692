import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { StatsInputError, benjaminiHochberg } from '../../../src/stats/index.ts';

describe('benjaminiHochberg', () => {
  // Benjamini & Hochberg (1995), JRSS B 57(1): 289-300, section 4: the worked example with
  // 15 p-values, where the step-up procedure at q = 0.05 rejects the four smallest.
  // (p-values recalled from the paper, not re-read from it.)
  const paper = [0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344, 0.0459, 0.324, 0.4262, 0.5719, 0.6528, 0.759, 1.0];

  it("the paper's example: the first four are rejected at q = 0.05", () => {
    const adj = benjaminiHochberg(paper);
    const rejected = Array.from(adj).flatMap((a, i) => (a <= 0.05 ? [i] : []));
    expect(rejected).toEqual([0, 1, 2, 3]);
    // Step-up rule by hand: the largest k with p_(k) <= k * 0.05 / 15 is k = 4
    // (0.0095 <= 0.01333; 0.0201 > 0.01667, ..., 0.0459 > 0.03).
    let kMax = 0;
    paper.forEach((p, i) => {
      if (p <= ((i + 1) * 0.05) / 15) kMax = i + 1;
    });
    expect(kMax).toBe(4);
  });

  it('adjusted values match scipy.stats.false_discovery_control(ps, method="bh")', () => {
    // SciPy 1.17.1, scipy.stats.false_discovery_control(paper, method='bh')
    const scipy = [
      0.0015, 0.003, 0.0095, 0.035625, 0.0603, 0.06385714285714286, 0.06385714285714286, 0.0645, 0.07650000000000001,
      0.486, 0.5811818181818181, 0.7148749999999999, 0.7532307692307693, 0.8132142857142857, 1.0,
    ];
    const adj = benjaminiHochberg(paper);
    scipy.forEach((v, i) => expect(Math.abs(adj[i] - v)).toBeLessThanOrEqual(1e-12 * v));
    // Input order is kept: the same values shuffled give the same adjusted value per p.
    const order = [14, 3, 9, 0, 7, 12, 5, 1, 11, 8, 2, 13, 6, 10, 4];
    const shuffled = benjaminiHochberg(order.map((i) => paper[i]));
    order.forEach((i, k) => expect(shuffled[k]).toBe(adj[i]));
    // SciPy 1.17.1, false_discovery_control([0.01, 0.04, 0.03], method='bh') (doc example)
    expect(Array.from(benjaminiHochberg([0.01, 0.04, 0.03]))).toEqual([0.03, 0.04, 0.04]);
  });

  it('properties: equals the definition min_{j >= i} min(1, k p_(j) / j), monotone, >= p, <= 1', () => {
    fc.assert(
      fc.property(fc.array(fc.double({ min: 0, max: 1, noNaN: true }), { maxLength: 60 }), (ps) => {
        const adj = benjaminiHochberg(ps);
        const k = ps.length;
        const sorted = [...ps].sort((a, b) => a - b);
        for (let i = 0; i < k; i++) {
          const rank = sorted.indexOf(ps[i]); // first position of this value among ties
          let def = 1;
          for (let j = rank; j < k; j++) def = Math.min(def, sorted[j] * (k / (j + 1)));
          expect(Math.abs(adj[i] - def)).toBeLessThanOrEqual(1e-15);
          expect(adj[i]).toBeGreaterThanOrEqual(ps[i]);
          expect(adj[i]).toBeLessThanOrEqual(1);
          for (let j = 0; j < k; j++) if (ps[i] <= ps[j]) expect(adj[i]).toBeLessThanOrEqual(adj[j]);
        }
      }),
      { numRuns: 200, seed: 5 },
    );
  });

  it('empty input, and throws on values outside [0, 1]', () => {
    expect(benjaminiHochberg([]).length).toBe(0);
    expect(() => benjaminiHochberg([0.1, 1.2])).toThrow(StatsInputError);
    expect(() => benjaminiHochberg([Number.NaN])).toThrow(/p-values in \[0, 1\]/);
    expect(() => benjaminiHochberg([-0.1])).toThrow(StatsInputError);
  });
});
