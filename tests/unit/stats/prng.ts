/**
 * Deterministic test data that a Python script can reproduce bit for bit, so reference values
 * computed once with SciPy refer to exactly the same numbers as the tests.
 *
 * Only 32-bit integer operations and IEEE-754 +, -, *, / are used (no log, sin or exp),
 * because those four are correctly rounded in every language while libm functions may
 * differ in the last bit between V8 and CPython.
 */

/**
 * mulberry32 (Tommy Ettinger, public domain): a 32-bit state generator of uniform [0, 1)
 * numbers with 32 random bits each. Returns a function that yields the next number.
 */
export function mulberry32(seed: number): () => number {
  let a = seed | 0;
  return () => {
    a = (a + 0x6d2b79f5) | 0;
    let t = Math.imul(a ^ (a >>> 15), 1 | a);
    t = (t + Math.imul(t ^ (t >>> 7), 61 | t)) ^ t;
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Approximately standard normal: sum of 12 uniforms minus 6 (Irwin-Hall), additions only. */
export function normal12(rand: () => number): number {
  let s = 0;
  for (let k = 0; k < 12; k++) s += rand();
  return s - 6;
}

/** Round half up to `decimals` places with floor(x * 10^d + 0.5) / 10^d (same in Python). */
export function roundHalfUp(x: number, decimals: number): number {
  const f = 10 ** decimals;
  return Math.floor(x * f + 0.5) / f;
}

/**
 * `count` values of shift + scale * normal12, rounded to `decimals` places when decimals >= 0
 * (ties on purpose), unrounded when decimals < 0.
 */
export function normalSample(
  seed: number,
  count: number,
  options: { shift?: number; scale?: number; decimals?: number } = {},
): Float64Array {
  const rand = mulberry32(seed);
  const shift = options.shift ?? 0;
  const scale = options.scale ?? 1;
  const decimals = options.decimals ?? -1;
  const out = new Float64Array(count);
  for (let i = 0; i < count; i++) {
    const x = shift + scale * normal12(rand);
    out[i] = decimals >= 0 ? roundHalfUp(x, decimals) : x;
  }
  return out;
}

/** `count` uniform [0, 1) values. */
export function uniformSample(seed: number, count: number): Float64Array {
  const rand = mulberry32(seed);
  const out = new Float64Array(count);
  for (let i = 0; i < count; i++) out[i] = rand();
  return out;
}
