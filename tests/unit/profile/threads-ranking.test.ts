/**
 * Worker threads profile a big day's features (PARALLEL_MIN_ROWS and more) with the same
 * result as one thread, ranking sums included: the served order and the score travel to the
 * workers on shared memory with the list grouping.
 */
import { describe, expect, it } from 'vitest';
import { parseConfig } from '../../../src/config/index.ts';
import { PARALLEL_MIN_ROWS, buildDayProfile, profileOnThisThread, threadedProfiler, type NumericProfile } from '../../../src/profile/index.ts';
import type { DayColumns } from '../../../src/profile/index.ts';
import { mulberry32 } from '../stats/prng.ts';

const config = parseConfig({
  source: { table: 'shop.results', columns: { label: 'clicked', score: 'score' } },
  features: [{ name: 'a' }, { name: 'b' }, { name: 'c', kind: 'binary' }],
});

function day(): DayColumns {
  const rows = PARALLEL_MIN_ROWS + 10_000;
  const size = 25;
  const rand = mulberry32(7);
  const numeric = [0, 1, 2, 3].map(() => new Float64Array(new SharedArrayBuffer(8 * rows)));
  const listOf = new Int32Array(rows);
  const position = new Int32Array(rows);
  const label = new Float64Array(rows);
  for (let i = 0; i < rows; i++) {
    // Rows arrive bottom of the list first.
    const p = size - (i % size);
    listOf[i] = Math.floor(i / size);
    position[i] = p;
    label[i] = rand() < 0.2 / p ? 1 : 0;
    numeric[0]![i] = -0.03 * p + rand();
    numeric[1]![i] = Math.round(rand() * 4);
    numeric[2]![i] = rand() < 0.3 ? 1 : 0;
    numeric[3]![i] = 1 - p / size + 0.01 * rand();
  }
  return { date: '2025-03-10', rows, totalRows: rows, sampled: false, listOf, lists: Math.ceil(rows / size), itemHash: Float64Array.from({ length: rows }, (_, i) => i), position, label, numeric, missing: [null, null, null, null], categorical: [null, null, null, null] };
}

describe('threadedProfiler', () => {
  it('gives the profiles of one thread, association sums included', async () => {
    expect(config.features.map((f) => f.name)).toEqual(['a', 'b', 'c', 'score']);
    const one = await buildDayProfile(day(), config, null, profileOnThisThread);
    const two = await buildDayProfile(day(), config, null, threadedProfiler(2));
    for (const name of ['a', 'b', 'c', 'score']) {
      const x = one.features[name] as NumericProfile;
      const y = two.features[name] as NumericProfile;
      expect(y.association, name).toEqual(x.association);
      expect(Array.from(y.sortedSample), name).toEqual(Array.from(x.sortedSample));
    }
    // The served order is recovered from the positions: feature a falls with the position.
    expect((one.features['a'] as NumericProfile).association!.position.sum).toBeLessThan(0);
    expect(two.outcome).toEqual(one.outcome);
  }, 120_000);
});
