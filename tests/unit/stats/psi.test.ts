import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import {
  PSI_EMPTY_BIN_COUNT,
  StatsInputError,
  binCounts,
  binEdgesFromSorted,
  psi,
  psiNoiseFloor,
} from '../../../src/stats/index.ts';
import { mulberry32 } from './prng.ts';

function relErr(actual: number, expected: number): number {
  return Math.abs(actual - expected) / Math.abs(expected);
}

describe('psi', () => {
  it('hand-computed case, and the Jeffreys identity PSI = KL(c||b) + KL(b||c)', () => {
    // Shares b = (0.5, 0.3, 0.2), c = (0.4, 0.4, 0.2). By hand:
    //   (0.4 - 0.5) ln(0.4 / 0.5) = 0.1 ln(1.25) = 0.022314355131420976
    //   (0.4 - 0.3) ln(0.4 / 0.3) = 0.1 ln(4/3)  = 0.028768207245178093
    //   (0.2 - 0.2) ln(1)         = 0
    //   PSI = 0.1 ln(5/3) = 0.05108256237659907
    // Jeffreys divergence (Jeffreys 1946): KL(c||b) = 0.4 ln 0.8 + 0.4 ln(4/3) = 0.025815408455028527,
    // KL(b||c) = 0.5 ln 1.25 + 0.3 ln 0.75 = 0.025267153921570557; sum 0.05108256237659908.
    // Cross-check: SciPy 1.17.1, scipy.special.rel_entr(c, b).sum() and rel_entr(b, c).sum()
    // printed exactly those two KL values.
    const r = psi([50, 30, 20], [40, 40, 20]);
    expect(relErr(r.contributions[0], 0.1 * Math.log(1.25))).toBeLessThanOrEqual(1e-14);
    expect(relErr(r.contributions[1], 0.1 * Math.log(4 / 3))).toBeLessThanOrEqual(1e-14);
    expect(r.contributions[2]).toBe(0);
    expect(relErr(r.psi, 0.05108256237659907)).toBeLessThanOrEqual(1e-14);
    expect(relErr(r.psi, 0.025815408455028527 + 0.025267153921570557)).toBeLessThanOrEqual(1e-14);
    expect(r.baselineShares).toEqual([0.5, 0.3, 0.2]);
    expect(r.currentShares).toEqual([0.4, 0.4, 0.2]);
    // Scale invariance: counts enter only through shares.
    expect(relErr(psi([5, 3, 2], [400, 400, 200]).psi, r.psi)).toBeLessThanOrEqual(1e-14);
  });

  it('empty-bin rule: a share of 0 on one side becomes 0.5 / total of that side, not renormalised', () => {
    expect(PSI_EMPTY_BIN_COUNT).toBe(0.5);
    // Baseline [10, 0, 10] (total 20): the empty bin's share becomes 0.5/20 = 0.025.
    // Current [5, 5, 10] (total 20): shares 0.25, 0.25, 0.5. By hand:
    //   (0.25 - 0.5) ln(0.25 / 0.5)     = 0.25 ln 2   = 0.17328679513998632
    //   (0.25 - 0.025) ln(0.25 / 0.025) = 0.225 ln 10 = 0.5180816459236603
    //   third bin equal: 0; PSI = 0.6913684410636467
    const a = psi([10, 0, 10], [5, 5, 10]);
    expect(relErr(a.contributions[0], 0.25 * Math.LN2)).toBeLessThanOrEqual(1e-14);
    expect(relErr(a.contributions[1], 0.225 * Math.LN10)).toBeLessThanOrEqual(1e-14);
    expect(relErr(a.psi, 0.6913684410636467)).toBeLessThanOrEqual(1e-14);
    expect(a.baselineShares).toEqual([0.5, 0, 0.5]); // raw shares, not smoothed

    // Current side empty: baseline [10, 10], current [20, 0] (total 20): 0 -> 0.025, the other
    // current share stays 1 (no renormalisation). By hand:
    //   (1 - 0.5) ln(1 / 0.5) = 0.5 ln 2 = 0.34657359027997264
    //   (0.025 - 0.5) ln(0.025 / 0.5) = 0.475 ln 20 = 1.4229728299381457
    const b = psi([10, 10], [20, 0]);
    expect(relErr(b.contributions[0], 0.5 * Math.LN2)).toBeLessThanOrEqual(1e-14);
    expect(relErr(b.contributions[1], 0.475 * Math.log(20))).toBeLessThanOrEqual(1e-14);
    expect(relErr(b.psi, 1.7695464202181184)).toBeLessThanOrEqual(1e-14);

    // Different totals: baseline [3, 0] (0 -> 0.5/3), current [1, 1] (total 2). By hand:
    //   (0.5 - 1) ln(0.5 / 1) = 0.5 ln 2; (0.5 - 1/6) ln(0.5 / (1/6)) = (1/3) ln 3
    const c = psi([3, 0], [1, 1]);
    expect(relErr(c.psi, 0.5 * Math.LN2 + Math.log(3) / 3)).toBeLessThanOrEqual(1e-14);
  });

  it('bins empty on both sides contribute 0', () => {
    const r = psi([10, 0, 10], [10, 0, 10]);
    expect(r.psi).toBe(0);
    expect(r.contributions).toEqual([0, 0, 0]);
    const s = psi([10, 0, 5, 0], [6, 0, 9, 0]);
    const t = psi([10, 5], [6, 9]);
    expect(s.psi).toBe(t.psi);
  });

  it('throws on invalid counts', () => {
    expect(() => psi([1, 2], [1, 2, 3])).toThrow(/same bins/);
    expect(() => psi([0, 0], [1, 2])).toThrow('psi requires a positive total on each side; the baseline total is 0');
    expect(() => psi([1, 2], [0, 0])).toThrow(/current total is 0/);
    expect(() => psi([], [])).toThrow(StatsInputError);
    expect(() => psi([1, -1, 3], [1, 1, 1])).toThrow(/non-negative/);
    expect(() => psi([1, Number.NaN], [1, 1])).toThrow(StatsInputError);
    expect(() => psi([1, Infinity], [1, 1])).toThrow(StatsInputError);
  });

  it('properties: PSI >= 0, 0 for identical counts, symmetric for equal totals, contributions sum to PSI', () => {
    const counts = fc.array(fc.integer({ min: 0, max: 1000 }), { minLength: 1, maxLength: 20 });
    fc.assert(
      fc.property(counts, counts, (xs, ys) => {
        const k = Math.min(xs.length, ys.length);
        const b = xs.slice(0, k);
        const c = ys.slice(0, k);
        b[0] += 1; // keep both totals positive
        c[0] += 1;
        const r = psi(b, c);
        expect(r.psi).toBeGreaterThanOrEqual(0);
        for (const t of r.contributions) expect(t).toBeGreaterThanOrEqual(0);
        expect(Math.abs(r.contributions.reduce((s, v) => s + v, 0) - r.psi)).toBeLessThanOrEqual(1e-12 * Math.max(1, r.psi));
        expect(psi(b, b).psi).toBe(0);
        const tb = b.reduce((s, v) => s + v, 0);
        const tc = c.reduce((s, v) => s + v, 0);
        if (tb === tc) expect(Math.abs(psi(c, b).psi - r.psi)).toBeLessThanOrEqual(1e-12 * Math.max(1, r.psi));
      }),
      { numRuns: 500, seed: 3 },
    );
  });
});

describe('psiNoiseFloor', () => {
  it('is (1/n + 1/m) times the chi-square quantile with B - 1 df', () => {
    // SciPy 1.17.1: scipy.stats.chi2.ppf(0.95, 9) = 16.918977604620448
    expect(relErr(psiNoiseFloor(1000, 1000, 10, 0.95), 0.002 * 16.918977604620448)).toBeLessThanOrEqual(1e-12);
    // SciPy 1.17.1: scipy.stats.chi2.ppf(0.99, 19) = 36.19086912927004
    expect(relErr(psiNoiseFloor(50000, 20000, 20, 0.99), (1 / 50000 + 1 / 20000) * 36.19086912927004)).toBeLessThanOrEqual(1e-12);
  });

  it('throws on invalid input', () => {
    expect(() => psiNoiseFloor(0, 10, 10, 0.95)).toThrow(StatsInputError);
    expect(() => psiNoiseFloor(10, 10, 1, 0.95)).toThrow(/bins/);
    expect(() => psiNoiseFloor(10, 10, 10, 1)).toThrow(/quantile/);
  });
});

describe('PSI under no shift (simulation, Yurdakul & Naranjo 2020)', () => {
  // Yurdakul, B. & Naranjo, J. (2020), Statistical properties of the population stability
  // index, J. Risk Model Validation 14(4): with no shift, PSI ~ (1/n + 1/m) chi2(B - 1), so
  // E[PSI] = (1/n + 1/m)(B - 1). Simulated the way Plumbline uses it: bins from the
  // baseline sample's quantiles, both samples uniform from one seeded generator.
  function simulate(n: number, m: number, bins: number, sims: number, seed: number): { mean: number; overFloor: number } {
    const rand = mulberry32(seed);
    const floor = psiNoiseFloor(n, m, bins, 0.95);
    let total = 0;
    let over = 0;
    for (let k = 0; k < sims; k++) {
      const base = new Float64Array(n);
      for (let i = 0; i < n; i++) base[i] = rand();
      const cur = new Float64Array(m);
      for (let i = 0; i < m; i++) cur[i] = rand();
      base.sort();
      const spec = binEdgesFromSorted(base, bins);
      const value = psi(binCounts(spec, base), binCounts(spec, cur)).psi;
      total += value;
      if (value > floor) over++;
    }
    return { mean: total / sims, overFloor: over / sims };
  }

  it('mean PSI over 400 pairs is within 10 % of (1/n + 1/m)(B - 1)', () => {
    for (const [n, m, bins, seed] of [
      [2000, 2000, 10, 99],
      [5000, 1000, 10, 100],
    ]) {
      const r = simulate(n, m, bins, 400, seed);
      const expected = (1 / n + 1 / m) * (bins - 1);
      expect(relErr(r.mean, expected)).toBeLessThanOrEqual(0.1);
      // The 95 % noise floor is exceeded about 5 % of the time (binomial sd ~1.1 % at 400
      // runs; loose bounds because the chi-square law is itself an approximation).
      expect(r.overFloor).toBeGreaterThanOrEqual(0.02);
      expect(r.overFloor).toBeLessThanOrEqual(0.1);
    }
  });
});
