/**
 * A day of the invented scenario (demo-data/) as the stream engine's columns, without a
 * database: the rows of generateDay laid out as readDay would (list indexes in order of
 * first appearance, item ids hashed, nulls as NaN with missing codes, categories coded).
 * For hermetic tests of profiles and checks on realistic days.
 */
import { FEATURES, LABEL_COLUMN, generateDay, type ScenarioOptions } from '../../demo-data/scenario.ts';
import type { Config } from '../../src/config/index.ts';
import type { DayColumns } from '../../src/source/index.ts';
import { MISSING_NULL, MISSING_TYPE_ERROR } from '../../src/stats/index.ts';

function hash(s: string): number {
  let h = 0x811c9dc5;
  for (let i = 0; i < s.length; i++) h = Math.imul(h ^ s.charCodeAt(i), 0x01000193);
  return h >>> 0;
}

/** The columns of `date` for a config over the scenario's table (wide layout; the score is a feature column). */
export function scenarioColumns(options: ScenarioOptions, date: string, config: Config): DayColumns {
  const rows = [...generateDay(options, date)];
  const n = rows.length;
  const listIndex = new Map<string, number>();
  const listOf = new Int32Array(n);
  const itemHash = new Float64Array(n);
  const position = new Int32Array(n);
  const label = new Float64Array(n);
  const numeric: (Float64Array | null)[] = config.features.map((f) => (f.kind === 'categorical' ? null : new Float64Array(new SharedArrayBuffer(8 * n))));
  const missing: (Uint8Array | null)[] = config.features.map(() => null);
  const dictionaries = config.features.map(() => new Map<string, number>());
  const categorical = config.features.map((f) => (f.kind === 'categorical' ? { codes: new Int32Array(n), dictionary: [] as string[] } : null));
  rows.forEach((r, i) => {
    const id = r.list_id;
    if (id === null) listOf[i] = -1;
    else {
      let l = listIndex.get(id);
      if (l === undefined) listIndex.set(id, (l = listIndex.size));
      listOf[i] = l;
    }
    itemHash[i] = hash(r.item_id);
    position[i] = r.position;
    const y = r[LABEL_COLUMN];
    label[i] = typeof y === 'number' ? y : Number.NaN;
    config.features.forEach((f, fi) => {
      const v = r[f.column ?? f.name];
      const cat = categorical[fi];
      if (cat !== null && cat !== undefined) {
        if (v === null || v === undefined) cat.codes[i] = -1;
        else {
          const dict = dictionaries[fi]!;
          let c = dict.get(String(v));
          if (c === undefined) {
            dict.set(String(v), (c = cat.dictionary.length));
            cat.dictionary.push(String(v));
          }
          cat.codes[i] = c;
        }
        return;
      }
      const col = numeric[fi]!;
      if (typeof v === 'number') col[i] = v;
      else {
        col[i] = Number.NaN;
        const m = (missing[fi] ??= new Uint8Array(new SharedArrayBuffer(n)));
        m[i] = v === null || v === undefined ? MISSING_NULL : MISSING_TYPE_ERROR;
      }
    });
  });
  return { date, rows: n, totalRows: n, sampled: false, listOf, lists: listIndex.size, itemHash, position, label, numeric, missing, categorical };
}

/** Feature names of the scenario that the association checks judge (item-level, not categorical). */
export const ITEM_NUMERIC_FEATURES = FEATURES.filter((f) => f.scope === 'item' && f.kind !== 'categorical').map((f) => f.name);
