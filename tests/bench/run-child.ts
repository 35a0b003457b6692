/**
 * One `run` of a day in a process of its own, so its peak RSS is its own. Prints one JSON
 * line: { seconds, maxRssMiB }. Used by run.bench.ts; not a test.
 *
 *   npx tsx tests/bench/run-child.ts CONFIG.json DATE
 */
import { readFileSync } from 'node:fs';
import { openRuntime } from '../../src/runtime.ts';
import { parseConfig } from '../../src/config/index.ts';
import { createLogger } from '../../src/log.ts';
import { runDay } from '../../src/run/index.ts';
import { migrate } from '../../src/store/index.ts';

const [configPath, date] = process.argv.slice(2);
if (configPath === undefined || date === undefined) throw new Error('usage: run-child.ts CONFIG.json DATE');
const config = parseConfig(JSON.parse(readFileSync(configPath, 'utf8')), configPath);
const log = createLogger(process.env['PLUMBLINE_LOG_LEVEL'] === 'debug' ? 'debug' : 'warn');
const rt = openRuntime(config, log);
await migrate(rt.storePool, config.store.schema);
const t0 = process.hrtime.bigint();
const { report } = await runDay({ config, source: rt.source, store: rt.store, log }, date);
const seconds = Number(process.hrtime.bigint() - t0) / 1e9;
await rt.close();
process.stdout.write(`${JSON.stringify({ seconds, maxRssMiB: process.resourceUsage().maxRSS / 1024, rows: report.current.rows, findings: report.findings.length })}\n`);
