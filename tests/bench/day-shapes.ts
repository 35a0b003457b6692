/**
 * The generated days the database benchmarks share: feature columns f00, f01, ... of four
 * shapes in turn (normal, uniform, heavy-tailed counts with many zeros, a per-list min-max of
 * the position), as SQL expressions over `g.i`, the row number of `generate_series(...) AS g(i)`,
 * with lists of `listSize` consecutive rows.
 */

/** Feature column names f00, f01, ... */
export function featureNames(n: number): string[] {
  return Array.from({ length: n }, (_, i) => `f${String(i).padStart(2, '0')}`);
}

/** The SQL expression of feature i; `shift` moves the normal features' mean (a drifted day). */
export function featureExpr(i: number, listSize: number, shift = 0): string {
  switch (i % 4) {
    case 0:
      return `(sqrt(-2 * ln(1 - random())) * cos(2 * pi() * random()) + ${shift})`;
    case 1:
      return 'random()';
    case 2:
      return 'floor(-ln(1 - random()) * 3) * (random() < 0.6)::int';
    default:
      return `((g.i % ${listSize})::float8 / ${listSize - 1})`;
  }
}

/** The expressions of features 0 .. n-1. */
export function featureExprs(n: number, listSize: number, shift = 0): string[] {
  return featureNames(n).map((_, i) => featureExpr(i, listSize, shift));
}
