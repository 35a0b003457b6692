/**
 * The shift of a day's mean of per-list values against the baseline days' means, and its
 * noise: a case worked out by hand, and the calibration of z under no change checked by
 * simulation (lists with a per-day random effect, as weekly seasonality gives).
 */
import { describe, expect, it } from 'vitest';
import { StatsInputError, addToMeanSums, dailyMeanShift, emptyMeanSums, type MeanSums } from '../../../src/stats/index.ts';
import { mulberry32, normal12 } from './prng.ts';

function sums(values: number[]): MeanSums {
  const s = emptyMeanSums();
  for (const v of values) addToMeanSums(s, v);
  return s;
}

describe('dailyMeanShift', () => {
  it('matches the hand computation', () => {
    // Baseline days [0, 1] (mean 0.5) and [1, 1] (mean 1): mean of means 0.75; pooled per-list
    // variance (3 - 9/4) / 3 = 0.25; sd^2 of the day means 0.125, of which list sampling
    // explains 0.25 x mean(1/2, 1/2) = 0.125, so no between-day spread. Current [0, 0, 0, 0]:
    // mean 0, se sqrt(0.25 / 4) = 0.25; noise^2 = 0 + 0.0625 + 0.125 / 2 = 0.125.
    const s = dailyMeanShift(sums([0, 0, 0, 0]), [sums([0, 1]), sums([1, 1])])!;
    expect(s.baselineMean).toBe(0.75);
    expect(s.change).toBe(-0.75);
    expect(s.baselineDaySd).toBeCloseTo(Math.sqrt(0.125), 15);
    expect(s.betweenDaySd).toBe(0);
    expect(s.currentSe).toBeCloseTo(0.25, 15);
    expect(s.noise).toBeCloseTo(Math.sqrt(0.125), 15);
    expect(s.z).toBeCloseTo(0.75 / Math.sqrt(0.125), 12);
  });

  it('uses list sampling on both sides with one baseline day, and is null without lists', () => {
    const s = dailyMeanShift(sums([1, 1, 0, 0]), [sums([0, 1, 1, 0])])!;
    // v = 1/3 (sample variance of 0, 1, 1, 0): noise^2 = v/4 + v/4.
    expect(s.noise).toBeCloseTo(Math.sqrt(2 / 12), 15);
    expect(s.z).toBe(0);
    expect(dailyMeanShift(emptyMeanSums(), [sums([1, 2])])).toBeNull();
    expect(dailyMeanShift(sums([1, 2]), [emptyMeanSums()])).toBeNull();
    expect(() => dailyMeanShift({ count: 1.5, sum: 0, sumSq: 0 }, [])).toThrow(StatsInputError);
  });

  it('under no change, |z| > 3 in well under 1 % of days, with or without a day-to-day effect (simulation)', () => {
    const rand = mulberry32(20251202);
    for (const dayEffectSd of [0, 0.05]) {
      let loud = 0;
      const trials = 1500;
      for (let t = 0; t < trials; t++) {
        const day = (lists: number): MeanSums => {
          const effect = dayEffectSd * normal12(rand);
          const s = emptyMeanSums();
          for (let l = 0; l < lists; l++) addToMeanSums(s, -0.4 + effect + 0.3 * normal12(rand));
          return s;
        };
        const base = Array.from({ length: 28 }, (_, i) => day(i % 7 >= 5 ? 240 : 180));
        if (dailyMeanShift(day(200), base)!.z > 3) loud++;
      }
      // Normal theory: P(|z| > 3) = 0.27 %; allow for the estimated spread of 28 days.
      expect(loud / trials, `day effect sd ${dayEffectSd}`).toBeLessThan(0.01);
    }
  });
});
