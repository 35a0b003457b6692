/**
 * What reaches the on-call rota, measured on a simulated table with a fixed seed
 * (tests/support/drift-sim.ts) through the real profile and check code: standing warnings
 * on clean feature-days before (main's logic: pooled distinct counts, fixed thresholds) and
 * after, the adaptive thresholds' false warnings and the smallest shift each mode catches,
 * and a 30 % stuck value on features whose items rotate daily.
 *
 * These are measurements of this code on invented data, not reference values; the
 * benchmark tests/bench/trust.bench.ts prints the same figures on a bigger simulation.
 */
import { beforeAll, describe, expect, it } from 'vitest';
import { measure, type Figures } from '../../support/drift-sim.ts';

const SHIFTS = [0.05, 0.1, 0.2, 0.3];
let figures: Figures;

beforeAll(async () => {
  figures = await measure({ rows: 5000, sampleSize: 20_000, seed: 11, window: 28 }, 42, SHIFTS, 3);
}, 120_000);

describe('clean rotating-item features (items change every day)', () => {
  it("warned every day for the feature with few items under main's pooled distinct count, and never now", () => {
    // rotating_few: 600 items a day out of a month of other items; rotating_many: 6000.
    expect(figures.distinctWarningsPer100.main).toBeGreaterThanOrEqual(50);
    expect(figures.distinctWarningsPer100.fixed).toBe(0);
  });

  it('still fires when 30 % of the items are stuck at one value (a join that fills a default)', () => {
    for (const s of figures.stuck) {
      expect(s.status, s.feature).not.toBe('ok');
      expect(s.drop, s.feature).toBeGreaterThan(0.2);
    }
  });
});

describe('warnings per 100 clean feature-days', () => {
  it('fall from main to this version, and the adaptive mode stays at or below 1 %', () => {
    expect(figures.cleanFeatureDays).toBe(42 * 8);
    expect(figures.warningsPer100.fixed).toBeLessThan(figures.warningsPer100.main);
    // Fixed thresholds still warn on the weekly seasonality of seasonal_a and seasonal_b (PSI, KS) ...
    expect(figures.byCheck.fixed['distinct_ratio_drop'] ?? 0).toBe(0);
    // ... which the adaptive thresholds learn from the baseline's own days.
    expect(figures.warningsPer100.adaptive).toBeLessThanOrEqual(1);
  });
});

describe('shifts of stable features, in standard deviations', () => {
  it('the adaptive mode catches 0.2 sd and more on every stable feature-day; the fixed thresholds miss 0.2 sd', () => {
    const at = (sd: number): Figures['detection'][number] => figures.detection.find((d) => d.sd === sd)!;
    expect(at(0.2).adaptive).toBe(1);
    expect(at(0.3).adaptive).toBe(1);
    expect(at(0.2).fixed).toBeLessThan(1);
    expect(figures.smallestCaught.adaptive).not.toBeNull();
    expect(figures.smallestCaught.adaptive!).toBeLessThanOrEqual(0.2);
    if (figures.smallestCaught.fixed !== null) expect(figures.smallestCaught.fixed).toBeGreaterThan(figures.smallestCaught.adaptive!);
  });
});
