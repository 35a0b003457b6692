#!/usr/bin/env node
/**
 * Composition root: parses the command line, loads the config, wires the units, maps
 * errors to exit codes (0 ok, 1 --fail-on matched or a bug, 2 config or usage, 3 source or
 * store unavailable). Nothing else in Plumbline reads argv or exits the process.
 */
import { realpathSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { parseArgs } from 'node:util';
import { connectionSummary, envSetting, loadConfigFile, maskUrl } from './config/index.ts';
import { ConfigError, EXIT, exitCodeFor, SourceError, StoreError } from './errors.ts';
import { createLogger, errorFields, type Logger, type LogLevel } from './log.ts';
import { renderTable, STATUS_LEVEL, type Report } from './report/index.ts';
import { checkRunnableDates, checkSource, configFingerprint, dateRange, isIsoDate, memoryEstimate, runDay, todayIn } from './run/index.ts';
import { migrate } from './store/index.ts';
import { openRuntime, type Runtime } from './runtime.ts';
import { VERSION } from './version.ts';

const USAGE = `plumbline ${VERSION}: watches ranking-feature snapshots in PostgreSQL

Usage:
  plumbline check-config FILE [--connect]     validate a config file and print it resolved; --connect also
                                              checks the source table, columns and keys in the database
  plumbline migrate  --config FILE            create or upgrade Plumbline's own tables
  plumbline run      --config FILE --date YYYY-MM-DD [--format table|json] [--fail-on warn|critical] [--all]
  plumbline backfill --config FILE --from YYYY-MM-DD --to YYYY-MM-DD [--force]
  plumbline report   --config FILE --date YYYY-MM-DD|latest [--format table|json] [--all]
  plumbline serve    --config FILE            the service: schedule, metrics, API, status page
  plumbline demo                              the whole job on an embedded database

The config file may also be given as PLUMBLINE_CONFIG. Connections come from the environment:
PLUMBLINE_SOURCE_URL and PLUMBLINE_STORE_URL (or *_FILE naming a file that holds one).
Exit codes: 0 done, 1 --fail-on matched, 2 config or usage error, 3 source or store unavailable.
`;

const OPTIONS = {
  config: { type: 'string', short: 'c' },
  date: { type: 'string' },
  from: { type: 'string' },
  to: { type: 'string' },
  format: { type: 'string' },
  'fail-on': { type: 'string' },
  force: { type: 'boolean' },
  all: { type: 'boolean' },
  help: { type: 'boolean', short: 'h' },
  version: { type: 'boolean' },
  port: { type: 'string' },
  connect: { type: 'boolean' },
} as const;

const LOG_LEVELS: readonly LogLevel[] = ['debug', 'info', 'warn', 'error'];

type Values = ReturnType<typeof parseArgs<{ options: typeof OPTIONS; allowPositionals: true }>>['values'];

function usageError(message: string): ConfigError {
  return new ConfigError(message, [`${message} (plumbline --help lists the commands)`]);
}

function requireDate(values: Values, name: 'date' | 'from' | 'to'): string {
  const v = values[name];
  if (v === undefined) throw usageError(`--${name} YYYY-MM-DD is required`);
  if (!isIsoDate(v)) throw usageError(`--${name}: ${JSON.stringify(v)} is not a date written YYYY-MM-DD`);
  return v;
}

function configPath(values: Values, positionals: string[]): string {
  const p = values.config ?? positionals[0] ?? envSetting('PLUMBLINE_CONFIG');
  if (p === undefined) throw usageError('--config FILE is required (or PLUMBLINE_CONFIG)');
  return p;
}

function print(report: Report, format: string | undefined, all: boolean | undefined): void {
  if (format === 'json') process.stdout.write(`${JSON.stringify(report, null, 2)}\n`);
  else process.stdout.write(renderTable(report, { all: all === true }));
}

function checkFormat(format: string | undefined): void {
  if (format !== undefined && format !== 'table' && format !== 'json') throw usageError(`--format must be table or json, got ${JSON.stringify(format)}`);
}

async function withRuntime<T>(values: Values, positionals: string[], log: Logger, fn: (rt: Runtime) => Promise<T>): Promise<T> {
  const config = loadConfigFile(configPath(values, positionals));
  const rt = openRuntime(config, log);
  try {
    return await fn(rt);
  } finally {
    await rt.close();
  }
}

export async function main(argv: string[]): Promise<number> {
  let parsed;
  try {
    parsed = parseArgs({ args: argv, options: OPTIONS, allowPositionals: true, strict: true });
  } catch (err) {
    throw usageError((err as Error).message);
  }
  const { values, positionals } = parsed;
  const [command, ...rest] = positionals;
  if (values.version === true) {
    process.stdout.write(`${VERSION}\n`);
    return EXIT.ok;
  }
  if (values.help === true || command === undefined || command === 'help') {
    process.stdout.write(USAGE);
    return command === undefined && values.help !== true ? EXIT.usage : EXIT.ok;
  }
  const level = envSetting('PLUMBLINE_LOG_LEVEL') ?? 'info';
  if (!LOG_LEVELS.includes(level as LogLevel)) throw new ConfigError(`PLUMBLINE_LOG_LEVEL must be one of ${LOG_LEVELS.join(', ')}, got ${JSON.stringify(level)}`);
  const log = createLogger(level as LogLevel);

  switch (command) {
    case 'check-config': {
      const path = configPath(values, rest);
      const config = loadConfigFile(path);
      let notes: string[] = [];
      if (values.connect === true) {
        // The same catalogue checks a run starts with, every problem listed (exit 2 when any).
        const rt = openRuntime(config, log);
        try {
          const { problems, notes: found } = await checkSource(rt.source, config);
          if (problems.length > 0) throw new ConfigError(`the source does not match ${path} (${problems.length} problem${problems.length === 1 ? '' : 's'})`, problems);
          notes = found;
        } finally {
          await rt.close();
        }
      }
      process.stdout.write(`# ${path} is valid. Resolved, with defaults (fingerprint ${configFingerprint(config)}):\n`);
      // Secrets are masked wherever config is printed (an Alertmanager URL may carry credentials).
      const shown = config.alerting.alertmanagerUrl === undefined ? config : { ...config, alerting: { ...config.alerting, alertmanagerUrl: maskUrl(config.alerting.alertmanagerUrl) } };
      process.stdout.write(`${JSON.stringify(shown, null, 2)}\n`);
      process.stdout.write(`${connectionSummary().map((l) => `# ${l}`).join('\n')}\n`);
      const mem = memoryEstimate(config);
      process.stdout.write(
        `# memory at the cap: about ${Math.ceil(mem.bytes / 2 ** 20)} MiB (${config.source.engine} engine, ${mem.rows} rows x ${mem.features} features; README "Sizing")\n`,
      );
      if (values.connect === true) process.stdout.write('# source: table, columns, types and jsonb keys match the config\n');
      for (const note of notes) process.stdout.write(`# note: ${note}\n`);
      return EXIT.ok;
    }
    case 'migrate':
      return withRuntime(values, rest, log, async (rt) => {
        const applied = await migrate(rt.storePool, rt.config.store.schema);
        process.stdout.write(applied.length === 0 ? 'store is up to date\n' : `applied: ${applied.join(', ')}\n`);
        return EXIT.ok;
      });
    case 'run': {
      checkFormat(values.format);
      const date = requireDate(values, 'date');
      const failOn = values['fail-on'];
      if (failOn !== undefined && failOn !== 'warn' && failOn !== 'critical') throw usageError(`--fail-on must be warn or critical, got ${JSON.stringify(failOn)}`);
      return withRuntime(values, rest, log, async (rt) => {
        // A future date or one before the first snapshot would store a bogus "latest" verdict.
        await checkRunnableDates({ config: rt.config, source: rt.source }, date, date, new Date());
        await migrate(rt.storePool, rt.config.store.schema);
        const { report } = await runDay({ config: rt.config, source: rt.source, store: rt.store, log }, date);
        print(report, values.format, values.all);
        if (failOn !== undefined && STATUS_LEVEL[report.status] >= STATUS_LEVEL[failOn]) return EXIT.failOn;
        return EXIT.ok;
      });
    }
    case 'backfill': {
      const from = requireDate(values, 'from');
      const to = requireDate(values, 'to');
      if (from > to) throw usageError('--from must not be after --to');
      return withRuntime(values, rest, log, async (rt) => {
        await checkRunnableDates({ config: rt.config, source: rt.source }, from, to, new Date());
        await migrate(rt.storePool, rt.config.store.schema);
        const dates = dateRange(from, to);
        const done = new Set(values.force === true ? [] : await rt.store.storedDates(from, to));
        let failures = 0;
        for (const [i, date] of dates.entries()) {
          const progress = `[${i + 1}/${dates.length}] ${date}`;
          if (done.has(date)) {
            process.stdout.write(`${progress} already stored (use --force to re-run)\n`);
            continue;
          }
          try {
            const { report, durationSeconds } = await runDay({ config: rt.config, source: rt.source, store: rt.store, log }, date);
            const problems = report.findings.filter((f) => f.status !== 'ok').length;
            process.stdout.write(`${progress} ${report.status.toUpperCase()} (${problems} problem${problems === 1 ? '' : 's'}, ${durationSeconds.toFixed(1)} s)\n`);
          } catch (err) {
            failures++;
            process.stdout.write(`${progress} FAILED: ${errorFields(err).error as string}\n`);
            if (exitCodeFor(err) !== EXIT.bug) throw err;
          }
        }
        return failures > 0 ? EXIT.failOn : EXIT.ok;
      });
    }
    case 'report': {
      checkFormat(values.format);
      const which = values.date ?? 'latest';
      if (which !== 'latest' && !isIsoDate(which)) throw usageError(`--date: ${JSON.stringify(which)} is not a date written YYYY-MM-DD (or latest)`);
      return withRuntime(values, rest, log, async (rt) => {
        const report = which === 'latest' ? await rt.store.latestReport(todayIn(rt.config, new Date())) : await rt.store.reportFor(which);
        if (report === null) {
          process.stderr.write(`no stored run for ${which}\n`);
          return EXIT.failOn;
        }
        print(report, values.format, values.all);
        return EXIT.ok;
      });
    }
    case 'serve': {
      const { serve } = await import('./scheduler/index.ts');
      const config = loadConfigFile(configPath(values, rest));
      const code = await serve({ config, log, openRuntime, unhandledRejections: installRejectionPolicy(log) });
      // serve() has closed everything it opened; a socket a dead peer still holds must not keep
      // the process alive past its stop (an unref'd timer fires only if something else lingers).
      setTimeout(() => process.exit(code), 1000).unref();
      return code;
    }
    case 'demo': {
      // The demo needs demo-data/ from a source checkout, so the production build leaves it
      // out: the module is named at run time, which keeps the compiler from following it.
      const demoModule = './demo/index.ts';
      const demo = (await import(demoModule).catch(() => null)) as DemoModule | null;
      if (demo === null) throw usageError('the demo runs from a source checkout: npm ci && npm run demo');
      return demo.runDemo({ log, port: values.port === undefined ? undefined : Number(values.port), openRuntime });
    }
    default:
      throw usageError(`unknown command ${JSON.stringify(command)}`);
  }
}

/**
 * Process-level policy of the long-running service: a promise rejection that nothing handled
 * is a bug, but one lost background task must not take the monitor down. It is logged and
 * counted (plumbline_unhandled_rejections_total); the process keeps serving.
 */
function installRejectionPolicy(log: Logger): () => number {
  let count = 0;
  // Replaces the process-wide default (end the process), which would otherwise run as well.
  servicePolicy.onRejection = (reason: unknown) => {
    count++;
    log.error('unhandled promise rejection', errorFields(reason));
  };
  return () => count;
}

/** What the process does with a promise rejection nothing handled: set by `serve`, else the default (end the process). */
const servicePolicy: { onRejection: ((reason: unknown) => void) | null } = { onRejection: null };

/** What the CLI needs of src/demo (see the 'demo' command). */
interface DemoModule {
  runDemo(options: { log: Logger; port: number | undefined; openRuntime: typeof openRuntime }): Promise<number>;
}

function report(err: unknown, debug: boolean): number {
  if (err instanceof ConfigError) {
    process.stderr.write(`plumbline: ${err.message}\n`);
    for (const p of err.problems) process.stderr.write(`  - ${p}\n`);
  } else if (err instanceof StoreError || err instanceof SourceError) {
    process.stderr.write(`plumbline: ${err.message}\n`);
  } else {
    // A stack trace is for whoever debugs Plumbline, not for its users: shown only at
    // PLUMBLINE_LOG_LEVEL=debug.
    const detail = err instanceof Error ? (debug ? (err.stack ?? err.message) : `${err.name}: ${err.message}`) : String(err);
    process.stderr.write(`plumbline: unexpected error: ${detail}\n`);
    if (!debug) process.stderr.write('plumbline: run again with PLUMBLINE_LOG_LEVEL=debug for the stack trace\n');
  }
  return exitCodeFor(err);
}

/**
 * Whether this module is the program (node dist/cli.js, tsx src/cli.ts, or the `plumbline`
 * command, which npm installs as a symbolic link to dist/cli.js under any name), rather
 * than imported by a test. Comparing real paths follows the link.
 */
function isMainModule(): boolean {
  const script = process.argv[1];
  if (script === undefined) return false;
  try {
    return realpathSync(script) === realpathSync(fileURLToPath(import.meta.url));
  } catch {
    return false;
  }
}

if (isMainModule()) {
  const debug = envSetting('PLUMBLINE_LOG_LEVEL') === 'debug';
  // An error nothing caught (in a callback or a forgotten promise) ends the process as Node
  // would, with exit code 1, but with one line instead of a stack trace (unless debug).
  const fatal = (err: unknown): void => {
    report(err, debug);
    process.exit(EXIT.bug);
  };
  process.on('uncaughtException', fatal);
  process.on('unhandledRejection', (reason: unknown) => (servicePolicy.onRejection ?? fatal)(reason));
  main(process.argv.slice(2)).then(
    (code) => {
      process.exitCode = code;
    },
    (err: unknown) => {
      process.exitCode = report(err, debug);
    },
  );
}
