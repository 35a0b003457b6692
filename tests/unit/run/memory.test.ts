/**
 * The memory estimate check-config prints, and the defaults and shipped limits it must
 * agree with: the default cap at 50 features fits the 2 GiB memory limit of
 * deploy/kubernetes, and so does the ConfigMap's config.
 */
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { parse, parseAllDocuments } from 'yaml';
import { describe, expect, it } from 'vitest';
import { parseConfig } from '../../../src/config/index.ts';
import { MEMORY_BASE_BYTES, memoryEstimate } from '../../../src/run/index.ts';

const MiB = 2 ** 20;
const ROOT = fileURLToPath(new URL('../../../', import.meta.url));
const features = (n: number) => Array.from({ length: n }, (_, i) => ({ name: `f${i}` }));

/** "2Gi" and the like (Kubernetes quantities, binary suffixes only) in bytes. */
function quantity(q: string): number {
  const m = /^(\d+)(Ki|Mi|Gi)$/.exec(q);
  if (m === null) throw new Error(`unexpected quantity ${q}`);
  return Number(m[1]) * { Ki: 2 ** 10, Mi: 2 ** 20, Gi: 2 ** 30 }[m[2] as 'Ki' | 'Mi' | 'Gi'];
}

describe('memoryEstimate', () => {
  it('follows the stated formula', () => {
    // 160 MiB + 1,000,000 x (8 x 50 + 72) + 8 x 200,000 x 50, worked by hand:
    // 167,772,160 + 472,000,000 + 80,000,000 = 719,772,160 bytes.
    const c = parseConfig({ source: { table: 't', maxRowsPerDay: 1_000_000 }, features: features(50) });
    expect(memoryEstimate(c)).toEqual({ rows: 1_000_000, features: 50, bytes: 719_772_160 });
    expect(MEMORY_BASE_BYTES).toBe(167_772_160);
    // Slices: topK [10] and one segment column of maxValues 10 are at most 1 + 11 = 12 slices:
    // + 1,000,000 x 72 + 8 x 12 x 50 x (50,000 + 10,000) = 72,000,000 + 288,000,000 bytes.
    const s = parseConfig({ source: { table: 't', maxRowsPerDay: 1_000_000 }, features: features(50), slices: { topK: [10], segments: [{ column: 'market' }] } });
    expect(memoryEstimate(s).bytes).toBe(719_772_160 + 360_000_000);
  });

  it('stays above the measured peaks (README "Figures")', () => {
    // 1M rows x 50 features, baseline stored: 588 MiB (targets.bench.ts, node dist/cli.js run);
    // with topK [10] and a segment column of five values: 847 MiB (slices.bench.ts, through tsx).
    const plain = parseConfig({ source: { table: 't', maxRowsPerDay: 1_000_000 }, features: features(50) });
    expect(memoryEstimate(plain).bytes / MiB).toBeGreaterThan(588);
    const sliced = parseConfig({ source: { table: 't', maxRowsPerDay: 1_000_000 }, features: features(50), slices: { topK: [10], segments: [{ column: 'market', maxValues: 10, minRows: 1000 }] } });
    expect(memoryEstimate(sliced).bytes / MiB).toBeGreaterThan(847);
  });

  it('counts only the day sample for the pushdown engine', () => {
    // daySampleCap = max(2000, ceil(2 x 200,000 / 28)) = 14,286 rows.
    const c = parseConfig({ source: { table: 't', engine: 'pushdown', maxRowsPerDay: 50_000_000 }, features: features(10) });
    expect(memoryEstimate(c)).toEqual({ rows: 14_286, features: 10, bytes: 167_772_160 + 14_286 * 152 + 8 * 200_000 * 10 });
  });
});

describe('defaults and shipped limits agree', () => {
  const deployment = parseAllDocuments(readFileSync(`${ROOT}deploy/kubernetes/deployment.yaml`, 'utf8')).map((d) => d.toJS() as Record<string, unknown>);
  const container = (deployment[0] as { spec: { template: { spec: { containers: { resources: { limits: { memory: string } } }[] } } } }).spec.template.spec.containers[0]!;
  const limit = quantity(container.resources.limits.memory);

  it('the default cap at 50 features fits the Kubernetes memory limit', () => {
    const c = parseConfig({ source: { table: 't' }, features: features(50) });
    expect(c.source.maxRowsPerDay).toBe(2_000_000);
    expect(memoryEstimate(c).bytes).toBeLessThan(limit);
  });

  it("the ConfigMap's config fits the Kubernetes memory limit", () => {
    const map = parse(readFileSync(`${ROOT}deploy/kubernetes/configmap.yaml`, 'utf8')) as { data: Record<string, string> };
    const c = parseConfig(parse(map.data['plumbline.yaml']!));
    expect(memoryEstimate(c).bytes).toBeLessThan(limit);
  });
});
