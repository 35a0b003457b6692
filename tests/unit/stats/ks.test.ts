import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import {
  KS_EXACT_AUTO_MAX_N,
  StatsInputError,
  kolmogorovCdf,
  kolmogorovSurvival,
  kolmogorovSurvivalInverse,
  ks2,
  ks2ExactSurvival,
  ks2Sorted,
  ksPValue,
} from '../../../src/stats/index.ts';
import { normalSample } from './prng.ts';

/*
 * Reference values: SciPy 1.17.1 with NumPy 2.4.6 (pyenv python3 3.11.7), computed once.
 * The Python script regenerated the same samples with an exact port of prng.ts
 * (mulberry32 and normal12 use only integer ops and + - * /, so both languages produce the
 * same doubles; prng.test.ts pins the first values) and called
 *   r = scipy.stats.ks_2samp(x, y, method=...)           -> statistic, pvalue
 *   scipy.special.kolmogorov(np.sqrt(n*m/(n+m)) * r.statistic)   -> Q_KS, the limit law
 * SciPy's method='asymp' two-sided p-value is NOT the limit law: per its source
 * (scipy/stats/_stats_py.py, ks_2samp) it is scipy.stats.kstwo.sf(D, round(n*m/(n+m))),
 * the one-sample finite-N distribution. Plumbline's asymptotic branch is the limit law, so
 * it is compared with scipy.special.kolmogorov to 1e-9, and with ks_2samp's 'asymp' value
 * only loosely (see "large samples").
 */

interface Case {
  name: string;
  a: () => Float64Array;
  b: () => Float64Array;
  /** scipy ks_2samp(x, y, method='asymp').statistic (= max |i/n - j/m|) */
  d: number;
  /** scipy ks_2samp(x, y, method='exact').pvalue; null when not computed */
  pExact: number | null;
  /** scipy.special.kolmogorov(sqrt(en) * D) */
  qKs: number;
}

const cases: Case[] = [
  // Rounded normal data (ties within and across samples), n != m.
  { name: 'A 1000 vs 1500, rounded to 0.1', a: () => normalSample(101, 1000, { decimals: 1 }), b: () => normalSample(202, 1500, { shift: 0.1, decimals: 1 }),
    d: 0.03066666666666673, pExact: 0.6173475881227665, qKs: 0.6251861786389781 },
  { name: 'B 100000 vs 70000, rounded to 0.01', a: () => normalSample(303, 100000, { decimals: 2 }), b: () => normalSample(404, 70000, { shift: 0.01, scale: 1.02, decimals: 2 }),
    d: 0.011525714285714361, pExact: null, qKs: 3.5471194047269694e-05 },
  { name: 'C 5000 vs 3000, continuous', a: () => normalSample(505, 5000), b: () => normalSample(606, 3000, { shift: 0.05 }),
    d: 0.013466666666666627, pExact: 0.8815701503642371, qKs: 0.8858087928219901 },
  { name: 'D 2000 vs 2500, integers (heavy ties)', a: () => normalSample(909, 2000, { scale: 1.5, decimals: 0 }), b: () => normalSample(910, 2500, { shift: 0.1, scale: 1.5, decimals: 0 }),
    d: 0.023700000000000054, pExact: 0.5525848492366482, qKs: 0.560495104473078 },
  { name: 'E 20 vs 30', a: () => normalSample(11, 20), b: () => normalSample(12, 30, { shift: 0.5 }),
    d: 0.2833333333333333, pExact: 0.25707602554737674, qKs: 0.29036608835762256 },
  { name: 'F 100 vs 100', a: () => normalSample(13, 100), b: () => normalSample(14, 100),
    d: 0.10999999999999999, pExact: 0.5830090612540064, qKs: 0.5806177304235198 },
  { name: 'G 250 vs 400', a: () => normalSample(15, 250), b: () => normalSample(16, 400, { shift: 0.3 }),
    d: 0.10899999999999999, pExact: 0.0478043819821214, qKs: 0.051686306972871285 },
  { name: 'H 3000 vs 2000', a: () => normalSample(17, 3000), b: () => normalSample(18, 2000, { shift: 0.08 }),
    d: 0.03983333333333333, pExact: 0.04354939992443227, qKs: 0.04438159537895693 },
  { name: 'I 10000 vs 10000', a: () => normalSample(19, 10000), b: () => normalSample(20, 10000, { shift: 0.05 }),
    d: 0.026900000000000035, pExact: 0.0014394936857743386, qKs: 0.0014402294759187477 },
  { name: 'J 10000 vs 7000', a: () => normalSample(21, 10000), b: () => normalSample(22, 7000, { shift: 0.03 }),
    d: 0.03227142857142862, pExact: 0.0003676468132881029, qKs: 0.00037692680440589994 },
  { name: 'K 7 vs 10000', a: () => normalSample(23, 7), b: () => normalSample(24, 10000),
    d: 0.13907142857142862, pExact: 0.995834595498915, qKs: 0.9992532223454936 },
  { name: 'L 500 vs 700, small p', a: () => normalSample(25, 500), b: () => normalSample(26, 700, { shift: 0.5 }),
    d: 0.20514285714285713, pExact: 3.232791658663857e-11, qKs: 4.361522958304711e-11 },
];

function relErr(actual: number, expected: number): number {
  return Math.abs(actual - expected) / Math.abs(expected);
}

describe('ks2 statistic and p-values against SciPy 1.17.1', () => {
  for (const c of cases) {
    it(`${c.name}: D, exact p and limit-law p`, () => {
      const a = c.a();
      const b = c.b();
      const sorted = ks2Sorted(a.slice().sort(), b.slice().sort());
      // scipy.stats.ks_2samp(x, y, method='asymp').statistic
      expect(Math.abs(sorted.d - c.d)).toBeLessThanOrEqual(1e-12);
      expect(sorted.n).toBe(a.length);
      expect(sorted.m).toBe(b.length);
      // D is symmetric in the two samples.
      expect(ks2Sorted(b.slice().sort(), a.slice().sort()).d).toBe(sorted.d);
      // scipy.special.kolmogorov(np.sqrt(en) * D)
      const asym = ksPValue(sorted.d, a.length, b.length, 'asymptotic');
      expect(asym.method).toBe('asymptotic');
      expect(relErr(asym.pValue, c.qKs)).toBeLessThanOrEqual(1e-9);
      if (c.pExact !== null) {
        // scipy.stats.ks_2samp(x, y, method='exact').pvalue
        const r = ks2(a, b, { method: 'exact' });
        expect(r.method).toBe('exact');
        expect(r.d).toBe(sorted.d);
        expect(relErr(r.pValue, c.pExact)).toBeLessThanOrEqual(1e-9);
      }
    });
  }

  it("method 'auto' is exact up to max(n, m) = 10000 and asymptotic above (SciPy's MAX_AUTO_N)", () => {
    expect(KS_EXACT_AUTO_MAX_N).toBe(10_000);
    // Case I sizes: exact; same d at 10001 x 10000: asymptotic, equal to Q_KS(sqrt(en) d).
    expect(ksPValue(0.0269, 10000, 10000).method).toBe('exact');
    const above = ksPValue(0.0269, 10001, 10000);
    expect(above.method).toBe('asymptotic');
    expect(above.pValue).toBe(kolmogorovSurvival(Math.sqrt((10001 * 10000) / 20001) * 0.0269));
    const b = cases[1]; // 100000 x 70000
    const r = ks2(b.a(), b.b());
    expect(r.method).toBe('asymptotic');
    expect(relErr(r.pValue, b.qKs)).toBeLessThanOrEqual(1e-9);
  });
});

describe('asymptotic p-value for large samples against scipy ks_2samp(method="asymp")', () => {
  // SciPy 1.17.1: r = scipy.stats.ks_2samp(x, y, method='asymp') on the same generated data
  // (mulberry32 port, vectorised with NumPy). pAsymp = r.pvalue = kstwo.sf(D, round(en)).
  const large = [
    { name: 'M 20000 vs 30000', a: () => normalSample(31, 20000), b: () => normalSample(32, 30000, { shift: 0.02 }),
      d: 0.01325000000000004, pAsymp: 0.029326138301551508, qKs: 0.029588897939421748 },
    { name: 'N 20000 vs 25000, rounded to 0.01', a: () => normalSample(33, 20000, { decimals: 2 }), b: () => normalSample(34, 25000, { decimals: 2 }),
      d: 0.006570000000000076, pAsymp: 0.7210187262372456, qKs: 0.7236176195663853 },
    { name: 'O 1e6 vs 1e6', a: () => normalSample(35, 1_000_000), b: () => normalSample(36, 1_000_000, { shift: 0.008 }),
      d: 0.003102000000000049, pAsymp: 0.00013218063491380163, qKs: 0.00013245642700152128 },
    { name: 'P 1e6 vs 7e5', a: () => normalSample(37, 1_000_000), b: () => normalSample(38, 700_000, { shift: 0.012 }),
      d: 0.00483699999999998, pAsymp: 8.544792887110182e-09, qKs: 8.573279329415345e-09 },
    { name: 'Q 1e6 vs 7e5, rounded to 0.001', a: () => normalSample(39, 1_000_000, { decimals: 3 }), b: () => normalSample(40, 700_000, { shift: 0.003, decimals: 3 }),
      d: 0.0025682857142858007, pAsymp: 0.008732974153485378, qKs: 0.008748016723561708 },
  ];
  for (const c of large) {
    it(`${c.name}: same D, p within 1 % of SciPy's finite-N value, equal to the limit law`, () => {
      const r = ks2(c.a(), c.b());
      expect(r.method).toBe('asymptotic');
      expect(Math.abs(r.d - c.d)).toBeLessThanOrEqual(1e-12);
      expect(relErr(r.pValue, c.qKs)).toBeLessThanOrEqual(1e-9); // scipy.special.kolmogorov
      expect(relErr(r.pValue, c.pAsymp)).toBeLessThanOrEqual(0.01); // ks_2samp(method='asymp')
    });
  }

  it('the gap to kstwo.sf(D, round(en)) is O(1/sqrt(en)): under x/sqrt(en), and under 1 % at en >= 4e5 for p >= 1e-10', () => {
    // [n, m, d = x / sqrt(en) for x in 0.5 .. 3.4, kstwo.sf(d, round(en)), kolmogorov(sqrt(en) d)],
    // SciPy 1.17.1. The limit law is always the larger (more conservative) of the two.
    const grid: [number, number, number, number, number][] = [
      [20000, 20000, 0.005, 0.9628778025204304, 0.9639452436648751],
      [20000, 20000, 0.01, 0.2682191277029192, 0.26999967167735456],
      [20000, 20000, 0.013600000000000001, 0.04903580807632146, 0.049485876755377876],
      [20000, 20000, 0.02, 0.0006616848639387309, 0.0006709252557796953],
      [20000, 20000, 0.025, 7.319405460271144e-06, 7.453306344157342e-06],
      [20000, 20000, 0.03, 2.9761211950626197e-08, 3.045995948942526e-08],
      [20000, 20000, 0.034, 1.769849392581213e-10, 1.8202941528975806e-10],
      [20000, 30000, 0.004564354645876384, 0.9629709179734166, 0.9639452436648751],
      [20000, 30000, 0.009128709291752768, 0.26837378848815785, 0.26999967167735456],
      [20000, 30000, 0.012415044636783766, 0.04907513456010393, 0.049485876755377876],
      [20000, 30000, 0.018257418583505537, 0.000662513159867424, 0.0006709252557796953],
      [20000, 30000, 0.02282177322938192, 7.3318304911880926e-06, 7.453306344157342e-06],
      [20000, 30000, 0.027386127875258303, 2.9829076574744306e-08, 3.045995948942526e-08],
      [20000, 30000, 0.03103761159195941, 1.774957707696834e-10, 1.8202941528975935e-10],
      [1000000, 1000000, 0.0007071067811865475, 0.9637944615856476, 0.9639452436648751],
      [1000000, 1000000, 0.001414213562373095, 0.26974713261886973, 0.26999967167735456],
      [1000000, 1000000, 0.0019233304448274093, 0.04942239943097526, 0.049485876755377876],
      [1000000, 1000000, 0.00282842712474619, 0.0006696541930169697, 0.0006709252557796953],
      [1000000, 1000000, 0.0035355339059327377, 7.435542478749578e-06, 7.453306344157342e-06],
      [1000000, 1000000, 0.004242640687119285, 3.0371983070628784e-08, 3.045995948942526e-08],
      [1000000, 1000000, 0.004808326112068523, 1.8142715282281036e-10, 1.8202941528975935e-10],
      [1000000, 700000, 0.0007791937224739796, 0.9637789719737561, 0.9639452436648751],
      [1000000, 700000, 0.0015583874449479592, 0.2697210183821057, 0.26999967167735467],
      [1000000, 700000, 0.002119406925129225, 0.04941579439525623, 0.049485876755377876],
      [1000000, 700000, 0.0031167748898959183, 0.000669520119326074, 0.0006709252557796965],
      [1000000, 700000, 0.0038959686123698984, 7.433643151978494e-06, 7.453306344157342e-06],
      [1000000, 700000, 0.0046751623348438775, 3.03624196830917e-08, 3.045995948942526e-08],
      [1000000, 700000, 0.005298517312823062, 1.8136065941698214e-10, 1.8202941528975935e-10],
    ];
    for (const [n, m, d, finiteN, limit] of grid) {
      const en = (n * m) / (n + m);
      const p = ksPValue(d, n, m, 'asymptotic').pValue;
      expect(relErr(p, limit)).toBeLessThanOrEqual(1e-9);
      const gap = (p - finiteN) / finiteN;
      expect(gap).toBeGreaterThan(0);
      // Envelope x / sqrt(en) with x = sqrt(en) d (so simply d): the gap grows with x and
      // shrinks like 1/sqrt(en), the finite-sample correction of the one-sample law.
      const x = Math.sqrt(en) * d;
      expect(gap).toBeLessThanOrEqual(x / Math.sqrt(en));
      if (en >= 4e5) expect(gap).toBeLessThanOrEqual(0.01);
    }
  });
});

describe('kolmogorovSurvival (limit distribution)', () => {
  it('matches scipy.special.kolmogorov(x) to 1e-12 relative for x in 0.04 .. 6', () => {
    // SciPy 1.17.1, scipy.special.kolmogorov(x)
    const ref: [number, number][] = [
      [0.04, 1.0], [0.1, 1.0], [0.2, 0.999999999999495], [0.3, 0.9999906941986655],
      [0.5, 0.9639452436648751], [0.7, 0.7112351950296893], [0.9, 0.3927307079406543],
      [0.99, 0.2808738392255489], [1.0, 0.26999967167735456], [1.01, 0.25943416909359746],
      [1.2, 0.11224966667072497], [1.36, 0.049485876755377876], [1.5, 0.022217962616525127],
      [2.0, 0.0006709252557796953], [2.5, 7.453306344157342e-06], [3.0, 3.045995948942526e-08],
      [4.0, 2.532833109818835e-14], [5.0, 3.8574996959278356e-22], [6.0, 1.0760372320042276e-31],
    ];
    for (const [x, q] of ref) expect(relErr(kolmogorovSurvival(x), q)).toBeLessThanOrEqual(1e-12);
  });

  it('kolmogorovCdf keeps relative accuracy for small x (scipy.stats.kstwobign.cdf)', () => {
    // SciPy 1.17.1, scipy.stats.kstwobign.cdf(x)
    const ref: [number, number][] = [
      [0.2, 5.050407338670114e-13], [0.3, 9.305801334566636e-06], [0.4, 0.0028076732227017387],
      [0.5, 0.036054756335124914], [0.6, 0.13571722094939573], [0.8, 0.45585758842580193],
    ];
    for (const [x, k] of ref) expect(relErr(kolmogorovCdf(x), k)).toBeLessThanOrEqual(1e-12);
  });

  it('is 1 at x <= 0, 0 at +Infinity, decreasing, and throws on NaN', () => {
    expect(kolmogorovSurvival(0)).toBe(1);
    expect(kolmogorovSurvival(-3)).toBe(1);
    expect(kolmogorovSurvival(Infinity)).toBe(0);
    let prev = 1;
    for (let x = 0.05; x < 4; x += 0.05) {
      const q = kolmogorovSurvival(x);
      expect(q).toBeLessThanOrEqual(prev);
      prev = q;
    }
    expect(() => kolmogorovSurvival(Number.NaN)).toThrow(StatsInputError);
  });

  it("Smirnov's (1948) critical values c(alpha) = 1.22, 1.36, 1.63 for alpha = 0.10, 0.05, 0.01", () => {
    // Smirnov, N. (1948), Ann. Math. Stat. 19(2): 279-281, the usual handbook table of
    // D_crit = c(alpha) sqrt((n + m) / (n m)). The table rounds c to two decimals, so the
    // check is that alpha lies between Q_KS(c + 0.005) and Q_KS(c - 0.005), that the
    // inverse rounds back to c, and that the p-value at D_crit is within ~2 % of alpha
    // (Q_KS(1.22) = 0.1019 is 1.9 % above 0.10 because of that rounding).
    // kolmogi reference: SciPy 1.17.1 scipy.special.kolmogi(alpha).
    const table: [number, number, number][] = [
      [0.1, 1.22, 1.2238478702170823],
      [0.05, 1.36, 1.3580986393225507],
      [0.01, 1.63, 1.6276236115189504],
    ];
    const n = 1000;
    const m = 1500;
    for (const [alpha, c, kolmogi] of table) {
      expect(kolmogorovSurvival(c + 0.005)).toBeLessThan(alpha);
      expect(kolmogorovSurvival(c - 0.005)).toBeGreaterThan(alpha);
      const inv = kolmogorovSurvivalInverse(alpha);
      expect(Math.round(inv * 100) / 100).toBe(c);
      expect(relErr(inv, kolmogi)).toBeLessThanOrEqual(1e-12);
      const dCrit = c * Math.sqrt((n + m) / (n * m));
      const p = ksPValue(dCrit, n, m, 'asymptotic').pValue;
      expect(relErr(p, alpha)).toBeLessThanOrEqual(0.02);
    }
  });
});

/** D by definition: evaluate both ECDFs at every pooled value, O((n + m)^2). */
function bruteForceD(a: number[], b: number[]): number {
  let d = 0;
  for (const x of [...a, ...b]) {
    const fa = a.filter((v) => v <= x).length / a.length;
    const fb = b.filter((v) => v <= x).length / b.length;
    d = Math.max(d, Math.abs(fa - fb));
  }
  return d;
}

/** P(D >= d) by enumerating all orderings of n a's and m b's (no ties), for tiny n, m. */
function bruteForceExact(d: number, n: number, m: number): number {
  let total = 0;
  let hits = 0;
  const walk = (i: number, j: number, maxGap: number): void => {
    const gap = Math.max(maxGap, Math.abs(i * m - j * n));
    if (i === n && j === m) {
      total++;
      if (gap >= Math.round(d * n * m)) hits++;
      return;
    }
    if (i < n) walk(i + 1, j, gap);
    if (j < m) walk(i, j + 1, gap);
  };
  walk(0, 0, 0);
  return hits / total;
}

describe('ks2 properties (fast-check)', () => {
  const sample = fc.array(fc.integer({ min: -5, max: 5 }), { minLength: 1, maxLength: 40 });

  it('D is in [0, 1], symmetric, 0 for identical samples, equal to the ECDF definition with ties', () => {
    fc.assert(
      fc.property(sample, sample, (xs, ys) => {
        const a = Float64Array.from(xs);
        const b = Float64Array.from(ys);
        const r = ks2(a, b);
        expect(r.d).toBeGreaterThanOrEqual(0);
        expect(r.d).toBeLessThanOrEqual(1);
        expect(ks2(b, a).d).toBe(r.d);
        expect(ks2(a, a.slice().reverse()).d).toBe(0);
        expect(Math.abs(r.d - bruteForceD(xs, ys))).toBeLessThanOrEqual(1e-15);
        expect(r.pValue).toBeGreaterThanOrEqual(0);
        expect(r.pValue).toBeLessThanOrEqual(1);
      }),
      { numRuns: 300, seed: 20240611 },
    );
  });

  it('D is the ECDF definition when one sample is at most a quarter of the other (the binary-search walk)', () => {
    const small = fc.array(fc.integer({ min: -8, max: 8 }), { minLength: 1, maxLength: 20 });
    const big = fc.array(fc.oneof(fc.integer({ min: -10, max: 10 }), fc.double({ min: -10, max: 10, noNaN: true })), { minLength: 80, maxLength: 400 });
    fc.assert(
      fc.property(small, big, (xs, ys) => {
        const a = Float64Array.from(xs).sort();
        const b = Float64Array.from(ys).sort();
        const d = bruteForceD(xs, ys);
        expect(Math.abs(ks2Sorted(a, b).d - d)).toBeLessThanOrEqual(1e-15);
        expect(Math.abs(ks2Sorted(b, a).d - d)).toBeLessThanOrEqual(1e-15);
        expect(ks2Sorted(b, a)).toMatchObject({ n: ys.length, m: xs.length });
      }),
      { numRuns: 300, seed: 20261202 },
    );
  });

  it('exact p-value equals enumeration of all orderings (n, m <= 6)', () => {
    for (let n = 1; n <= 6; n++) {
      for (let m = 1; m <= 6; m++) {
        const g = gcdOf(n, m);
        for (let h = 0; h <= n * m; h += g) {
          const d = h / (n * m);
          expect(Math.abs(ks2ExactSurvival(d, n, m) - bruteForceExact(d, n, m))).toBeLessThanOrEqual(1e-14);
        }
      }
    }
  });

  it('exact p-value is non-increasing in d and in [0, 1]', () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 300 }), fc.integer({ min: 1, max: 300 }), (n, m) => {
        let prev = 1;
        for (let d = 0; d <= 1; d += 0.05) {
          const p = ks2ExactSurvival(d, n, m);
          expect(p).toBeGreaterThanOrEqual(0);
          expect(p).toBeLessThanOrEqual(prev + 1e-15);
          prev = p;
        }
      }),
      { numRuns: 50, seed: 7 },
    );
  });
});

function gcdOf(a: number, b: number): number {
  return b === 0 ? a : gcdOf(b, a % b);
}

describe('ks2 input checks', () => {
  it('throws on an empty sample, NaN, infinities and unsorted input to ks2Sorted', () => {
    const one = Float64Array.of(1);
    expect(() => ks2Sorted(new Float64Array(0), one)).toThrow('ks2Sorted requires at least one value in each sample');
    expect(() => ks2(one, new Float64Array(0))).toThrow('ks2 requires at least one value in each sample');
    expect(() => ks2(Float64Array.of(1, Number.NaN), one)).toThrow(StatsInputError);
    expect(() => ks2Sorted(Float64Array.of(1, Infinity), one)).toThrow(/finite/);
    expect(() => ks2Sorted(Float64Array.of(2, 1), one)).toThrow(/sorted ascending/);
    expect(() => ksPValue(1.5, 3, 4)).toThrow(StatsInputError);
    expect(() => ksPValue(0.5, 0, 4)).toThrow(StatsInputError);
    expect(() => ksPValue(0.5, 3, 4, 'fast' as 'auto')).toThrow(StatsInputError);
  });

  it('doc examples hold', () => {
    expect(ks2Sorted(Float64Array.of(1, 2, 3), Float64Array.of(2, 3, 4, 5))).toEqual({ d: 0.5, n: 3, m: 4 });
    expect(ks2ExactSurvival(1, 2, 2)).toBeCloseTo(1 / 3, 15);
    // SciPy 1.17.1: scipy.stats.ks_2samp([1, 2, 3], [2, 3, 4, 5], method='exact').pvalue
    // = 0.6571428571428571 (= 23/35)
    expect(relErr(ks2(Float64Array.of(3, 1, 2), Float64Array.of(5, 2, 4, 3)).pValue, 0.6571428571428571)).toBeLessThanOrEqual(1e-12);
    expect(ksPValue(0, 5, 5).pValue).toBe(1);
    // A d between lattice values (multiples of 1/12 here) is P(D >= d): the next value up.
    expect(ks2ExactSurvival(0.49, 3, 4)).toBe(ks2ExactSurvival(0.5, 3, 4));
    expect(ks2ExactSurvival(0.51, 3, 4)).toBe(ks2ExactSurvival(7 / 12, 3, 4));
    expect(ks2ExactSurvival(0.51, 3, 4)).toBeLessThan(ks2ExactSurvival(0.5, 3, 4));
  });
});
