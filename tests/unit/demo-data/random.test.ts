import { describe, expect, it } from 'vitest';
import { Random, hashInts } from '../../../demo-data/index.ts';

describe('Random (mulberry32)', () => {
  it('matches the reference implementation', () => {
    // Expected outputs: Tommy Ettinger's public-domain C reference of mulberry32
    //   uint32_t z = (*state += 0x6D2B79F5UL); z = (z ^ (z >> 15)) * (z | 1UL);
    //   z ^= z + (z ^ (z >> 7)) * (z | 61UL); return z ^ (z >> 14);
    // compiled with gcc 12.2.0 (Debian bookworm) and run from state 1 and 20250203.
    const r1 = new Random(1);
    expect([0, 1, 2, 3, 4].map(() => r1.uniform() * 2 ** 32)).toEqual([2693262067, 11749833, 2265367787, 4213581821, 4159151403]);
    const r2 = new Random(20250203);
    expect([0, 1, 2].map(() => r2.uniform() * 2 ** 32)).toEqual([3297213750, 1829415336, 1813230688]);
  });

  it('repeats itself for the same seed and differs for another', () => {
    const draw = (seed: number): number[] => {
      const r = new Random(seed);
      return [r.uniform(), r.normal(), r.poisson(4), r.lognormal(0, 1), r.int(10), r.weighted([1, 2, 3])];
    };
    expect(draw(7)).toEqual(draw(7));
    expect(draw(7)).not.toEqual(draw(8));
  });

  it('hashInts is deterministic and order-sensitive', () => {
    expect(hashInts(1, 2, 3)).toBe(hashInts(1, 2, 3));
    expect(hashInts(1, 2, 3)).not.toBe(hashInts(3, 2, 1));
    expect(hashInts(1, 2)).not.toBe(hashInts(1, 2, 0));
  });

  // Moment checks with a fixed seed: deterministic, so they cannot flake. Tolerances are
  // 5 standard errors of the estimate (mean: sigma / sqrt(n); variance: sqrt((mu4 - sigma^4) / n)).
  it('normal draws have mean 0 and variance 1', () => {
    const r = new Random(42);
    const n = 200_000;
    let s = 0;
    let ss = 0;
    for (let i = 0; i < n; i++) {
      const z = r.normal();
      s += z;
      ss += z * z;
    }
    const mean = s / n;
    const variance = ss / n - mean * mean;
    // N(0, 1): mean 0, variance 1, fourth central moment 3 (definition of the normal law).
    expect(Math.abs(mean)).toBeLessThan(5 * Math.sqrt(1 / n));
    expect(Math.abs(variance - 1)).toBeLessThan(5 * Math.sqrt(2 / n));
  });

  it('uniform draws lie in [0, 1) with mean 1/2', () => {
    const r = new Random(3);
    const n = 100_000;
    let s = 0;
    let lo = 1;
    let hi = 0;
    for (let i = 0; i < n; i++) {
      const u = r.uniform();
      s += u;
      lo = Math.min(lo, u);
      hi = Math.max(hi, u);
    }
    expect(lo).toBeGreaterThanOrEqual(0);
    expect(hi).toBeLessThan(1);
    // Uniform(0, 1): mean 1/2, variance 1/12.
    expect(Math.abs(s / n - 0.5)).toBeLessThan(5 * Math.sqrt(1 / 12 / n));
  });

  it('Poisson draws follow the Poisson probabilities for a small rate', () => {
    const r = new Random(11);
    const lambda = 3;
    const n = 100_000;
    const counts = new Array<number>(20).fill(0);
    for (let i = 0; i < n; i++) counts[Math.min(19, r.poisson(lambda))]++;
    // P(K = k) = e^-lambda lambda^k / k! (definition of the Poisson law).
    let pk = Math.exp(-lambda);
    for (let k = 0; k <= 8; k++) {
      if (k > 0) pk *= lambda / k;
      const se = Math.sqrt((pk * (1 - pk)) / n);
      expect(Math.abs(counts[k] / n - pk)).toBeLessThan(5 * se);
    }
  });

  it('Poisson draws above the split rate keep mean and variance lambda', () => {
    const r = new Random(12);
    const lambda = 75; // split into 30 + 30 + 15
    const n = 50_000;
    let s = 0;
    let ss = 0;
    for (let i = 0; i < n; i++) {
      const k = r.poisson(lambda);
      s += k;
      ss += k * k;
    }
    const mean = s / n;
    const variance = ss / n - mean * mean;
    // Poisson: mean = variance = lambda; fourth central moment lambda (1 + 3 lambda).
    expect(Math.abs(mean - lambda)).toBeLessThan(5 * Math.sqrt(lambda / n));
    expect(Math.abs(variance - lambda)).toBeLessThan(5 * Math.sqrt((lambda * (1 + 3 * lambda) - lambda * lambda) / n));
  });

  it('rejects a negative or non-finite Poisson rate', () => {
    const r = new Random(1);
    expect(() => r.poisson(-1)).toThrow(/poisson rate/);
    expect(() => r.poisson(Number.NaN)).toThrow(/poisson rate/);
    expect(r.poisson(0)).toBe(0);
  });
});
