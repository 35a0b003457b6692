/**
 * A small seeded random source for the demo scenario. Written by hand because none of
 * the project's dependencies offers a seedable generator with normal, lognormal and
 * Poisson draws, and the demo must produce the same rows for the same seed on every
 * machine (Math.random cannot be seeded).
 */

/**
 * Mixes any number of 32-bit integers into one 32-bit hash. Used to give every day,
 * list and catalogue item a random stream of its own, so a fault that changes one
 * list cannot shift the draws of any other.
 *
 * Built from the finaliser of MurmurHash3 (Appleby, 2011, public domain reference
 * implementation, `fmix32`), applied after each input is folded in. Cost: O(inputs).
 */
export function hashInts(...values: number[]): number {
  let h = 0x811c9dc5;
  for (const v of values) {
    h = Math.imul(h ^ (v | 0), 0x9e3779b1);
    h ^= h >>> 16;
    h = Math.imul(h, 0x85ebca6b);
    h ^= h >>> 13;
    h = Math.imul(h, 0xc2b2ae35);
    h ^= h >>> 16;
  }
  return h >>> 0;
}

/** Hash of a string (FNV-1a, 32 bit), for folding names into seeds. */
export function hashString(s: string): number {
  let h = 0x811c9dc5;
  for (let i = 0; i < s.length; i++) {
    h ^= s.charCodeAt(i);
    h = Math.imul(h, 0x01000193);
  }
  return h >>> 0;
}

/**
 * A seeded pseudo-random stream.
 *
 * Uniforms come from mulberry32 (Tommy Ettinger, 2017, public domain): a 32-bit state
 * advanced by a Weyl sequence and scrambled; period 2^32, fast, and ample for a demo
 * (not for cryptography or large simulations). Each list of the scenario gets its own
 * short stream, so the period is never approached.
 */
export class Random {
  private state: number;
  private spareNormal: number | undefined;

  constructor(seed: number) {
    this.state = seed >>> 0;
  }

  /** Uniform in [0, 1). */
  uniform(): number {
    this.state = (this.state + 0x6d2b79f5) | 0;
    let t = this.state;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  }

  /** Uniform integer in 0..n-1. */
  int(n: number): number {
    return Math.floor(this.uniform() * n);
  }

  /** True with probability p. */
  bernoulli(p: number): boolean {
    return this.uniform() < p;
  }

  /**
   * Normal draw by the Box-Muller transform (Box, G. E. P., Muller, M. E. (1958).
   * A note on the generation of random normal deviates. Annals of Mathematical
   * Statistics 29(2): 610-611). Each transform yields two deviates; the second is kept.
   */
  normal(mean = 0, sd = 1): number {
    if (this.spareNormal !== undefined) {
      const z = this.spareNormal;
      this.spareNormal = undefined;
      return mean + sd * z;
    }
    // 1 - u lies in (0, 1], so the logarithm is finite.
    const r = Math.sqrt(-2 * Math.log(1 - this.uniform()));
    const theta = 2 * Math.PI * this.uniform();
    this.spareNormal = r * Math.sin(theta);
    return mean + sd * r * Math.cos(theta);
  }

  /** exp(N(mu, sigma^2)): median e^mu, right-skewed. */
  lognormal(mu: number, sigma: number): number {
    return Math.exp(this.normal(mu, sigma));
  }

  /**
   * Poisson draw. Knuth's multiplication method (Knuth, TAOCP vol. 2, 3.4.1) for a
   * rate up to 30; larger rates are split into parts of at most 30 and the draws
   * summed, which is exact because a sum of independent Poisson variables is Poisson
   * with the summed rate. Cost O(lambda) uniforms: fine for the demo's small rates.
   */
  poisson(lambda: number): number {
    if (!(lambda >= 0) || !Number.isFinite(lambda)) throw new RangeError(`poisson rate must be a finite number >= 0, got ${lambda}`);
    let total = 0;
    let rest = lambda;
    while (rest > 0) {
      const part = Math.min(rest, 30);
      rest -= part;
      const limit = Math.exp(-part);
      let k = 0;
      let p = this.uniform();
      while (p > limit) {
        k++;
        p *= this.uniform();
      }
      total += k;
    }
    return total;
  }

  /** Index drawn with probability proportional to weights[i]. */
  weighted(weights: readonly number[]): number {
    let sum = 0;
    for (const w of weights) sum += w;
    let u = this.uniform() * sum;
    for (let i = 0; i < weights.length; i++) {
      u -= weights[i];
      if (u < 0) return i;
    }
    return weights.length - 1;
  }
}
