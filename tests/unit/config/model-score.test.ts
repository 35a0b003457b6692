import { describe, expect, it } from 'vitest';
import { parseConfig } from '../../../src/config/index.ts';

const base = { source: { table: 'impressions', columns: { score: 'model_score' } }, features: [{ name: 'price' }] };

describe('the model score column', () => {
  it('is watched as a numeric item-level feature named after its column', () => {
    const c = parseConfig(base);
    expect(c.features.map((f) => f.name)).toEqual(['price', 'model_score']);
    expect(c.features[1]).toMatchObject({ column: 'model_score', kind: 'numeric', scope: 'item', nullable: true });
  });

  it('is not added twice when a declared feature already reads that column', () => {
    const c = parseConfig({ ...base, features: [{ name: 'score', column: 'model_score', range: { min: 0, max: 1 } }] });
    expect(c.features.map((f) => f.name)).toEqual(['score']);
  });

  it('adds nothing when no score column is configured', () => {
    const c = parseConfig({ source: { table: 'impressions' }, features: [{ name: 'price' }] });
    expect(c.features).toHaveLength(1);
  });
});
