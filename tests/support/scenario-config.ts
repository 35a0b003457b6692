/**
 * A Plumbline config for a table loaded with the invented scenario of demo-data/, built from
 * the scenario's own feature list so tests and scenario cannot drift apart.
 */
import { parseConfig, type Config, type ConfigInput } from '../../src/config/index.ts';
import { FEATURES, LABEL_COLUMN, NULLABLE_FEATURES, SCORE_COLUMN } from '../../demo-data/scenario.ts';

export function scenarioConfig(table: string, options: { layout?: 'wide' | 'jsonb'; storeSchema: string; overrides?: Partial<ConfigInput> }): Config {
  const jsonb = options.layout === 'jsonb';
  const input: ConfigInput = {
    source: {
      table,
      columns: { label: LABEL_COLUMN, score: SCORE_COLUMN },
      ...(jsonb ? { featuresColumn: 'features' } : {}),
    },
    features: FEATURES.map((f) => ({
      name: f.name,
      ...(jsonb ? { key: f.name } : {}),
      kind: f.kind,
      scope: f.scope,
      nullable: NULLABLE_FEATURES.includes(f.name),
      ...(f.range !== undefined ? { range: f.range } : {}),
      ...(f.rule !== undefined ? { withinList: { rule: f.rule, tolerance: 1e-6 } } : {}),
    })),
    baseline: { window: { type: 'trailing', days: 28 } },
    store: { schema: options.storeSchema },
    ...options.overrides,
  };
  return parseConfig(input, 'test config');
}
