/**
 * What reaches the on-call rota, measured on a simulated table (tests/support/drift-sim.ts)
 * through the real profile and check code: warnings per 100 clean feature-days on main's
 * logic (pooled distinct counts, fixed thresholds), with fixed thresholds, and with adaptive
 * thresholds; the share of stable feature-days in which each mode catches a shift of k
 * standard deviations; a 30 % stuck value on features whose items rotate daily. Prints
 * figures; asserts nothing (tests/unit/checks/trust-figures.test.ts asserts on a smaller run).
 *
 *   npx tsx tests/bench/trust.bench.ts
 */
import { pathToFileURL } from 'node:url';
import { SIM_FEATURES, measure } from '../support/drift-sim.ts';

export async function main(): Promise<void> {
  const options = { rows: 40_000, sampleSize: 200_000, seed: 20_260_105, window: 28 };
  const cleanDays = 56;
  const shifts = [0.05, 0.1, 0.15, 0.2, 0.25, 0.3];
  const t0 = performance.now();
  const f = await measure(options, cleanDays, shifts, 7);
  const seconds = (performance.now() - t0) / 1000;
  console.log(`simulated table: ${SIM_FEATURES.length} features (${SIM_FEATURES.map((x) => x.name).join(', ')}), ${options.rows.toLocaleString('en-US')} rows a day, baseline ${options.window} days, sampleSize ${options.sampleSize.toLocaleString('en-US')}`);
  console.log(`clean feature-days: ${f.cleanFeatureDays} (${cleanDays} days x ${SIM_FEATURES.length} features)`);
  console.log('warnings (any feature check at warn or worse) per 100 clean feature-days:');
  for (const mode of ['main', 'fixed', 'adaptive'] as const) {
    const by = Object.entries(f.byCheck[mode])
      .map(([k, v]) => `${k} ${v}`)
      .join(', ');
    console.log(`  ${mode.padEnd(8)} ${f.warningsPer100[mode].toFixed(2)}   (feature-days by check: ${by === '' ? 'none' : by})`);
  }
  for (const w of f.adaptiveWarnings) console.log(`    adaptive: ${w}`);
  console.log(`distinct_ratio_drop on the rotating-item features, per 100 clean feature-days: main ${f.distinctWarningsPer100.main.toFixed(1)}, now ${f.distinctWarningsPer100.fixed.toFixed(1)}`);
  console.log(`30 % of items stuck at one value: ${f.stuck.map((s) => `${s.feature} ${s.status} (drop ${(100 * s.drop).toFixed(1)} %)`).join('; ')}`);
  console.log('shift of stable features (sd): share of feature-days caught by PSI or KS at warn or worse');
  console.log('  sd     fixed   adaptive');
  for (const d of f.detection) console.log(`  ${d.sd.toFixed(2)}   ${(100 * d.fixed).toFixed(0).padStart(4)} %  ${(100 * d.adaptive).toFixed(0).padStart(4)} %`);
  console.log(`smallest shift caught on every stable feature-day tried: fixed ${f.smallestCaught.fixed ?? 'none'} sd, adaptive ${f.smallestCaught.adaptive ?? 'none'} sd`);
  console.log(`(${seconds.toFixed(1)} s)`);
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) await main();
