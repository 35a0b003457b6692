/**
 * `npm run demo`: the whole job on an embedded database. Starts PGlite on a local socket,
 * loads the invented scenario (demo-data/), back-fills every day after the baseline,
 * prints what it found on which day, then serves metrics, API and status page on
 * 127.0.0.1 until Ctrl-C.
 *
 * The demo runs from a source checkout (it needs demo-data/); the production build
 * leaves it out.
 */
import { fileURLToPath } from 'node:url';
import { loadConfigFile, type Config } from '../config/index.ts';
import { createPool } from '../db/index.ts';
import type { Logger } from '../log.ts';
import { createLogger } from '../log.ts';
import type { Report } from '../report/index.ts';
import { runDay } from '../run/index.ts';
import { serve } from '../scheduler/index.ts';
import { migrate } from '../store/index.ts';
import { DEMO_SCENARIO, scenarioDates } from '../../demo-data/scenario.ts';
import { loadScenario } from '../../demo-data/load.ts';
import { startEmbeddedPostgres } from './embedded.ts';
import type { openRuntime as OpenRuntime } from '../runtime.ts';

const CONFIG_PATH = fileURLToPath(new URL('../../demo-data/plumbline.demo.yaml', import.meta.url));

export interface DemoOptions {
  log: Logger;
  port?: number | undefined;
  /** Resolves to stop the demo (tests); Ctrl-C otherwise. */
  stopSignal?: Promise<string>;
  out?: (line: string) => void;
  openRuntime: typeof OpenRuntime;
}

function problemsLine(report: Report): string {
  const problems = report.findings.filter((f) => f.status !== 'ok');
  if (problems.length === 0) return 'all checks ok';
  const byWho = new Map<string, string[]>();
  for (const f of problems) {
    const who = f.feature ?? 'dataset';
    const what = `${f.rule === null ? f.check : `${f.check}[${f.rule}]`}${f.status === 'critical' ? '!' : ''}`;
    byWho.set(who, [...(byWho.get(who) ?? []), what]);
  }
  return [...byWho.entries()].map(([who, checks]) => `${who}: ${checks.join(', ')}`).join('; ');
}

export async function runDemo(options: DemoOptions): Promise<number> {
  const out = options.out ?? ((line: string) => process.stdout.write(`${line}\n`));
  // The demo's own logs go to stderr at warn level so the summary stays readable.
  const quiet = createLogger('warn');
  const t0 = Date.now();
  out('Plumbline demo: starting an embedded PostgreSQL (PGlite) on 127.0.0.1 ...');
  const db = await startEmbeddedPostgres();
  try {
    const env = { PLUMBLINE_SOURCE_URL: db.url, PLUMBLINE_STORE_URL: db.url };
    const base = loadConfigFile(CONFIG_PATH);
    const config: Config = { ...base, http: { ...base.http, port: options.port ?? base.http.port } };

    // One connection of its own for loading (no statement timeout: the load is long).
    const loaderPool = createPool({ url: db.url, applicationName: 'plumbline-demo-loader', statementTimeoutMs: 0, max: 1 });
    const loader = await loaderPool.connect();
    const dates = scenarioDates(DEMO_SCENARIO);
    out(`loading the scenario: ${dates.length} days (${dates[0]} .. ${dates[dates.length - 1]}) into ${config.source.table} ...`);
    try {
      await loadScenario(loader, { table: config.source.table, layout: 'wide', scenario: DEMO_SCENARIO });
    } finally {
      loader.release();
      await loaderPool.end();
    }
    out(`loaded in ${((Date.now() - t0) / 1000).toFixed(1)} s`);

    const rt = options.openRuntime(config, quiet, env);
    const window = config.baseline.window;
    const baselineDays = window.type === 'trailing' ? window.days : window.type === 'same_weekday' ? window.weeks * 7 : 0;
    const evaluate = dates.slice(Math.min(baselineDays, dates.length - 1));
    try {
      await migrate(rt.storePool, config.store.schema);
      out(`back-filling ${evaluate.length} days after the ${baselineDays}-day baseline:`);
      for (const date of evaluate) {
        const { report } = await runDay({ config, source: rt.source, store: rt.store, log: quiet }, date);
        const weekday = new Date(`${date}T00:00:00Z`).toLocaleDateString('en-US', { weekday: 'short', timeZone: 'UTC' });
        out(`  ${date} ${weekday}  ${report.status.toUpperCase().padEnd(8)} ${problemsLine(report)}`);
      }
    } finally {
      await rt.close();
    }
    out(`first results after ${((Date.now() - t0) / 1000).toFixed(1)} s ("!" marks critical findings; demo-data/README.md tells the story)`);

    const code = await serve({
      config,
      log: quiet,
      openRuntime: (c, l) => options.openRuntime(c, l, env),
      runSchedule: false,
      ...(options.stopSignal !== undefined ? { stopSignal: options.stopSignal } : {}),
      onListening: (url) => {
        out('');
        out(`status page:   ${url}/`);
        out(`metrics:       ${url}/metrics`);
        out(`latest report: ${url}/api/v1/reports/latest`);
        out('Ctrl-C stops the demo.');
      },
    });
    return code;
  } finally {
    await db.stop();
  }
}

export { startEmbeddedPostgres, type EmbeddedPostgres } from './embedded.ts';
