/**
 * Day profiles: each day's mergeable counts and capped value samples, kept so that the
 * baseline of any later window is a merge of stored days rather than a re-read of the
 * source.
 */
import { quoteIdent, withReadOnlyTransaction, type Pool, type PoolClient } from '../db/index.ts';
import type { DayProfile } from '../profile/index.ts';
import { decodeJson, encodeJson } from './codec.ts';
import { wrapped } from './wrap.ts';

export class DayProfileStore {
  private readonly table: string;

  constructor(
    private readonly pool: Pool,
    schema: string,
  ) {
    this.table = `${quoteIdent(schema)}.day_profiles`;
  }

  /** Saves (or replaces) one day's profile under a profile fingerprint. */
  async save(fingerprint: string, profile: DayProfile): Promise<void> {
    await wrapped(`saving the day profile of ${profile.date} failed`, () => this.saveWith(this.pool, fingerprint, profile));
  }

  /** The same, on a given client (inside the caller's transaction, e.g. a run's). */
  async saveWith(client: Pool | PoolClient, fingerprint: string, profile: DayProfile): Promise<void> {
    const json = JSON.stringify(encodeJson(profile));
    await client.query(
      `INSERT INTO ${this.table} (fingerprint, snapshot_date, total_rows, profile) VALUES ($1, $2::date, $3, $4::jsonb)
       ON CONFLICT (fingerprint, snapshot_date) DO UPDATE SET total_rows = EXCLUDED.total_rows, profile = EXCLUDED.profile, saved_at = now()`,
      [fingerprint, profile.date, profile.totalRows, json],
    );
  }

  /** The stored profiles among `dates` for a fingerprint. */
  async load(fingerprint: string, dates: readonly string[]): Promise<Map<string, DayProfile>> {
    const out = new Map<string, DayProfile>();
    if (dates.length === 0) return out;
    const rows = await wrapped('loading day profiles failed', () =>
      withReadOnlyTransaction(this.pool, (client) =>
        client.query<{ d: string; profile: unknown }>(`SELECT snapshot_date::text AS d, profile FROM ${this.table} WHERE fingerprint = $1 AND snapshot_date = ANY($2::date[])`, [
          fingerprint,
          dates,
        ]),
      ),
    );
    for (const r of rows.rows) out.set(r.d, decodeJson(r.profile) as DayProfile);
    return out;
  }
}
