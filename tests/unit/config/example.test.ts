/**
 * deploy/plumbline.example.yaml: it validates, it names every setting the schema knows
 * (walked from the zod schema itself, so a new setting without an example fails here), each
 * setting is explained by a comment where it first appears, and the values it calls
 * defaults are the schema's defaults.
 */
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import type { z } from 'zod';
import { ConfigSchema, DEFAULT_THRESHOLDS, loadConfigFile, parseConfig } from '../../../src/config/index.ts';

const EXAMPLE = fileURLToPath(new URL('../../../deploy/plumbline.example.yaml', import.meta.url));
const text = readFileSync(EXAMPLE, 'utf8');
const lines = text.split('\n');

/** Every key of every object schema reachable from `schema` (wrappers, arrays and unions are looked through). */
function settingNames(schema: z.core.$ZodType, out = new Set<string>()): Set<string> {
  const def = schema._zod.def as unknown as Record<string, unknown> & { type: string };
  switch (def.type) {
    case 'object':
      for (const [key, value] of Object.entries(def['shape'] as Record<string, z.core.$ZodType>)) {
        out.add(key);
        settingNames(value, out);
      }
      break;
    case 'default':
    case 'prefault':
    case 'optional':
    case 'nullable':
    case 'readonly':
    case 'nonoptional':
      settingNames(def['innerType'] as z.core.$ZodType, out);
      break;
    case 'array':
      settingNames(def['element'] as z.core.$ZodType, out);
      break;
    case 'union':
      for (const option of def['options'] as z.core.$ZodType[]) settingNames(option, out);
      break;
    case 'pipe':
      settingNames(def['in'] as z.core.$ZodType, out);
      break;
    default:
      break;
  }
  return out;
}

const isComment = (line: string): boolean => /^\s*#/.test(line);

/** Index of the first line that uses `key:` as a key (in a block, a flow mapping or a comment). */
function firstUse(key: string): number {
  const re = new RegExp(`(^|[\\s{,#-])${key}:(\\s|$)`);
  return lines.findIndex((l) => re.test(l));
}

/** True when the line is a comment, carries one, or follows a comment (blank lines aside). */
function explained(index: number): boolean {
  if (isComment(lines[index]!) || / #/.test(lines[index]!)) return true;
  for (let i = index - 1; i >= 0; i--) {
    if (lines[i]!.trim() === '') continue;
    return isComment(lines[i]!);
  }
  return false;
}

describe('deploy/plumbline.example.yaml', () => {
  it('validates', () => {
    const config = loadConfigFile(EXAMPLE);
    expect(config.features.length).toBeGreaterThanOrEqual(5);
    // Each within-list rule it explains is also used or named, and every kind of feature appears.
    expect(new Set(config.features.map((f) => f.kind))).toEqual(new Set(['numeric', 'binary', 'categorical']));
    expect(config.features.some((f) => f.scope === 'list')).toBe(true);
    expect(config.features.some((f) => f.key !== undefined)).toBe(true);
  });

  it('walks the schema (the walker itself finds nested and optional settings)', () => {
    const names = settingNames(ConfigSchema);
    for (const k of ['source', 'snapshotDate', 'featuresColumn', 'withinList', 'tolerance', 'weeks', 'from', 'warnBelow', 'alertmanagerUrl', 'markerTable', 'port']) {
      expect(names, k).toContain(k);
    }
  });

  it.each([...settingNames(ConfigSchema)].sort())('names and explains the setting %s', (key) => {
    const at = firstUse(key);
    expect(at, `${key}: not in the example`).toBeGreaterThanOrEqual(0);
    expect(explained(at), `${key} (line ${at + 1}) has no comment`).toBe(true);
  });

  it('uses the schema defaults wherever it says "default"', () => {
    const ex = loadConfigFile(EXAMPLE);
    const def = parseConfig({ source: { table: ex.source.table }, features: [{ name: 'x' }] });
    // The thresholds section lists every default ("the values below are the defaults").
    expect(ex.thresholds).toEqual(def.thresholds);
    expect(ex.thresholds).toEqual({
      ...DEFAULT_THRESHOLDS,
      ksAlpha: 0.01,
      psiNoiseQuantile: 0.999,
      rankingNoiseZ: 3,
      extremeIqrMultiple: 3,
      adaptive: { enabled: false, quantile: 1, margin: 1.5, criticalMultiple: 2, minDays: 7, floor: { psi: 0.02, ks: 0.03 } },
    });
    expect(ex.alerting).toEqual(def.alerting);
    expect(ex.outcome).toEqual(def.outcome);
    expect(ex.schedule).toEqual(def.schedule);
    expect(ex.http).toEqual(def.http);
    expect(ex.store).toEqual(def.store);
    // minDays is the one baseline setting it changes, and says so.
    expect({ ...ex.baseline, minDays: def.baseline.minDays }).toEqual(def.baseline);
    const { label, score, ...columns } = ex.source.columns;
    expect([label, score]).toEqual(['clicked', 'model_score']);
    expect(columns).toEqual(def.source.columns);
    const { featuresColumn, ...source } = ex.source;
    expect(featuresColumn).toBe('extra_features');
    expect({ ...source, columns: def.source.columns }).toEqual(def.source);
    expect(ex.features[0]!.withinList!.tolerance).toBe(def.features[0]!.withinList?.tolerance ?? 1e-6);
  });

  it('holds no secret: no URL with a password', () => {
    expect(text).not.toMatch(/\/\/[^/\s:@]+:[^/\s@]+@/);
  });
});
