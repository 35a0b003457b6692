/**
 * Runs days end to end the way the service does: a runtime (pools and store) for the
 * config, the store schema migrated, then `runDay` for each date in order, then closed.
 */
import { openRuntime } from '../../src/runtime.ts';
import type { Config } from '../../src/config/index.ts';
import { silentLogger } from '../../src/log.ts';
import type { Report } from '../../src/report/index.ts';
import { runDay } from '../../src/run/index.ts';
import { migrate } from '../../src/store/index.ts';

/** The report of each of `dates`, run on `sourceUrl` (also the store) into `config.store.schema`. */
export async function runDays(config: Config, sourceUrl: string, dates: readonly string[]): Promise<Map<string, Report>> {
  const rt = openRuntime(config, silentLogger, { PLUMBLINE_SOURCE_URL: sourceUrl });
  try {
    await migrate(rt.storePool, config.store.schema);
    const out = new Map<string, Report>();
    for (const d of dates) out.set(d, (await runDay({ config, source: rt.source, store: rt.store, log: silentLogger }, d)).report);
    return out;
  } finally {
    await rt.close();
  }
}
