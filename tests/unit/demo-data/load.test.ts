import { describe, expect, it } from 'vitest';
import { FEATURES, copyField, createTableSql, generateDay, loadScenario, parseTableName, type Queryable, type Row, type ScenarioOptions } from '../../../demo-data/index.ts';

// Hermetic: a client that records what it is sent. The loader's round trip through a
// PostgreSQL 15 server and through PGlite's socket server is exercised by
// demo-data/bench/load-bench.ts, which needs a database.

interface Call {
  text: string;
  values: unknown[] | undefined;
}

function recorder(failOn?: RegExp): { client: Queryable; calls: Call[] } {
  const calls: Call[] = [];
  return {
    calls,
    client: {
      query(text: string, values?: unknown[]) {
        calls.push({ text, values });
        if (failOn?.test(text)) return Promise.reject(new Error('server says no'));
        return Promise.resolve({ rows: [] });
      },
    },
  };
}

const DATE = '2025-02-04';
const scenario: ScenarioOptions = {
  startDate: '2025-02-03',
  days: 3,
  listsPerDay: 6,
  meanListSize: 10,
  seed: 17,
  faults: [
    { date: DATE, kind: 'nonfinite', feature: 'photo_quality', amount: 0.3 },
    { date: DATE, kind: 'type_error', feature: 'price', amount: 0.3 },
    { date: DATE, kind: 'null_spike', feature: 'review_count', amount: 0.3 },
  ],
};
const expected: Row[] = [...generateDay(scenario, DATE)];
const WIDE_COLUMNS = ['snapshot_date', 'list_id', 'item_id', 'position', 'clicked', 'model_score', ...FEATURES.map((f) => f.name)];

/** Rebuilds rows from the recorded multi-row VALUES inserts. */
function valuesRows(calls: Call[], width: number): unknown[][] {
  const out: unknown[][] = [];
  for (const c of calls.filter((x) => x.text.startsWith('INSERT'))) {
    const v = c.values as unknown[];
    expect(v.length % width).toBe(0);
    for (let i = 0; i < v.length; i += width) out.push(v.slice(i, i + width));
  }
  return out;
}

describe('parseTableName', () => {
  it('accepts plain and schema-qualified identifiers and quotes them', () => {
    expect(parseTableName('impressions')).toEqual({ schema: undefined, name: 'impressions', quoted: '"impressions"' });
    expect(parseTableName('demo.Brindle_2')).toEqual({ schema: 'demo', name: 'Brindle_2', quoted: '"demo"."Brindle_2"' });
  });

  it('rejects anything else', () => {
    for (const bad of ['', '1abc', 'a.b.c', 'demo.x;drop table y', 'a b', 'demo."x"', 'x-y', `a${'b'.repeat(63)}`]) {
      expect(() => parseTableName(bad), bad).toThrow(RangeError);
    }
  });
});

describe('createTableSql', () => {
  it('gives double precision to numeric and binary features and text to the category (wide)', () => {
    const sql = createTableSql('demo.t', 'wide');
    expect(sql).toContain('CREATE TABLE IF NOT EXISTS "demo"."t"');
    expect(sql).toContain('"snapshot_date" date NOT NULL');
    expect(sql).toContain('"position" integer NOT NULL');
    expect(sql).toContain('"clicked" smallint');
    expect(sql).toContain('"model_score" double precision');
    for (const f of FEATURES) expect(sql).toContain(`"${f.name}" ${f.kind === 'categorical' ? 'text' : 'double precision'}`);
  });

  it('puts the features into one jsonb column (jsonb)', () => {
    const sql = createTableSql('t', 'jsonb');
    expect(sql).toContain('"features" jsonb NOT NULL');
    for (const f of FEATURES) expect(sql).not.toContain(`"${f.name}"`);
  });
});

describe('loadScenario with multi-row VALUES (wide)', async () => {
  const { client, calls } = recorder();
  const result = await loadScenario(client, { table: 'demo.imp', layout: 'wide', scenario, dates: [DATE], method: 'values', batchRows: 7 });

  it('creates schema, table and index, then writes the day in one transaction after deleting it', () => {
    const texts = calls.map((c) => c.text);
    expect(texts[0]).toBe('CREATE SCHEMA IF NOT EXISTS "demo"');
    expect(texts[1]).toMatch(/^CREATE TABLE IF NOT EXISTS "demo"."imp"/);
    expect(texts[2]).toBe('CREATE INDEX IF NOT EXISTS "imp_snapshot_date_idx" ON "demo"."imp" (snapshot_date)');
    expect(texts[3]).toBe('BEGIN');
    expect(calls[4]).toEqual({ text: 'DELETE FROM "demo"."imp" WHERE snapshot_date = $1', values: [DATE] });
    expect(texts.at(-1)).toBe('COMMIT');
    expect(result.rows).toBe(expected.length);
    expect(result.days).toBe(1);
  });

  it('sends batches of at most batchRows rows with one parameter per cell', () => {
    const inserts = calls.filter((c) => c.text.startsWith('INSERT'));
    expect(inserts).toHaveLength(Math.ceil(expected.length / 7));
    for (const c of inserts) {
      expect((c.values as unknown[]).length).toBeLessThanOrEqual(7 * WIDE_COLUMNS.length);
      expect(c.text).toContain(`("snapshot_date", "list_id", "item_id", "position", "clicked", "model_score", "text_match"`);
    }
  });

  it('sends NaN and infinities as float8 spellings, text in a float column as null, everything else as generated', () => {
    const rows = valuesRows(calls, WIDE_COLUMNS.length);
    expect(rows).toHaveLength(expected.length);
    const seen = new Set<unknown>();
    rows.forEach((sent, i) => {
      WIDE_COLUMNS.forEach((col, c) => {
        const v = expected[i][col];
        if (typeof v === 'number' && !Number.isFinite(v)) {
          const spelled = Number.isNaN(v) ? 'NaN' : v > 0 ? 'Infinity' : '-Infinity';
          expect(sent[c]).toBe(spelled);
          seen.add(spelled);
        } else if (typeof v === 'string' && col === 'price') expect(sent[c]).toBeNull();
        else expect(sent[c]).toBe(v);
      });
    });
    expect(seen).toEqual(new Set(['NaN', 'Infinity', '-Infinity']));
    expect(expected.some((r) => typeof r.price === 'string')).toBe(true);
    expect(expected.some((r) => r.review_count === null)).toBe(true);
  });
});

describe('loadScenario with unnest (jsonb)', async () => {
  const { client, calls } = recorder();
  await loadScenario(client, { table: 'imp', layout: 'jsonb', scenario, dates: [DATE], batchRows: 25 });
  const inserts = calls.filter((c) => c.text.startsWith('INSERT'));

  it('sends one typed array per column', () => {
    expect(inserts[0].text).toBe(
      'INSERT INTO "imp" ("snapshot_date", "list_id", "item_id", "position", "clicked", "model_score", "features") SELECT * FROM unnest($1::date[], $2::text[], $3::text[], $4::integer[], $5::smallint[], $6::double precision[], $7::jsonb[])',
    );
    expect(inserts.map((c) => ((c.values as unknown[][])[0] as unknown[]).length).reduce((a, b) => a + b, 0)).toBe(expected.length);
    for (const c of inserts) expect((c.values as unknown[][])[0].length).toBeLessThanOrEqual(25);
  });

  it('writes the features as JSON: non-finite numbers as strings, nulls as null, text kept', () => {
    const docs = inserts.flatMap((c) => (c.values as unknown[][])[6] as string[]).map((s) => JSON.parse(s) as Record<string, unknown>);
    expect(docs).toHaveLength(expected.length);
    docs.forEach((doc, i) => {
      expect(Object.keys(doc)).toEqual(FEATURES.map((f) => f.name));
      for (const f of FEATURES) {
        const v = expected[i][f.name];
        expect(doc[f.name]).toBe(typeof v === 'number' && !Number.isFinite(v) ? String(v) : v);
      }
    });
    expect(docs.some((d) => d.photo_quality === 'NaN')).toBe(true);
    expect(docs.some((d) => typeof d.price === 'string')).toBe(true);
    expect(docs.some((d) => d.review_count === null)).toBe(true);
  });
});

describe('loadScenario failures', () => {
  it('rolls the day back and rethrows when an insert fails', async () => {
    const { client, calls } = recorder(/^INSERT/);
    await expect(loadScenario(client, { table: 'imp', layout: 'wide', scenario, dates: [DATE] })).rejects.toThrow('server says no');
    expect(calls.at(-1)?.text).toBe('ROLLBACK');
    expect(calls.some((c) => c.text === 'COMMIT')).toBe(false);
  });

  it('checks names and options before sending anything', async () => {
    const { client, calls } = recorder();
    await expect(loadScenario(client, { table: 'imp; drop', layout: 'wide', scenario })).rejects.toThrow(RangeError);
    await expect(loadScenario(client, { table: 'imp', layout: 'wide', scenario, method: 'values', batchRows: 5000 })).rejects.toThrow(/65535/);
    expect(calls).toHaveLength(0);
  });
});

describe('copyField', () => {
  it('writes COPY text format: \\N for null, escaped backslash, tab and line breaks', () => {
    // PostgreSQL 15 documentation, COPY, "Text Format": backslash sequences \\ \t \n \r and \N.
    expect(copyField(null)).toBe('\\N');
    expect(copyField(1.5)).toBe('1.5');
    expect(copyField(Number.NaN)).toBe('NaN');
    expect(copyField(Number.NEGATIVE_INFINITY)).toBe('-Infinity');
    expect(copyField('a\tb\\c\nd\re')).toBe('a\\tb\\\\c\\nd\\re');
  });
});
