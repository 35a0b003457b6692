/**
 * A simulated month and more of one invented ranking table, run through the real profile
 * and check code (buildDayProfile, capDayProfile, mergeBaseline, evaluateDay) without a
 * database, to measure how often clean feature-days warn and how small a shift each
 * threshold mode catches. Used by tests/unit/checks/trust-figures.test.ts (fixed seed,
 * asserted rates) and tests/bench/trust.bench.ts (prints the figures).
 *
 * Features of the invented table (lists of 20 items):
 * - stable_*: normal, no seasonality (the features the shifts are injected into);
 * - seasonal_*: weekly seasonality (weekend mean +0.6 sd) and promotion days (+0.4 sd on
 *   about one day in ten);
 * - rotating_*: an item attribute whose items rotate daily: each day a fresh set of items,
 *   every row one of that day's items (few items: many repeats; many items: few repeats).
 */
import { parseConfig, type Config, type ConfigInput } from '../../src/config/index.ts';
import { evaluateDay } from '../../src/checks/index.ts';
import { buildDayProfile, capDayProfile, mergeBaseline, type BaselineProfile, type DayProfile } from '../../src/profile/index.ts';
import type { Finding, Status } from '../../src/report/index.ts';
import { addDays } from '../../src/run/index.ts';
import type { DayColumns } from '../../src/source/index.ts';
import { daySampleCap } from '../../src/run/index.ts';
import { mulberry32, normal12 } from '../unit/stats/prng.ts';

export const SIM_START = '2026-01-05'; // a Monday
export const LIST_SIZE = 20;

export interface SimFeature {
  name: string;
  kind: 'stable' | 'seasonal' | 'rotating';
  /** rotating: items per day */
  items?: number;
}

export const SIM_FEATURES: SimFeature[] = [
  { name: 'stable_a', kind: 'stable' },
  { name: 'stable_b', kind: 'stable' },
  { name: 'stable_c', kind: 'stable' },
  { name: 'stable_d', kind: 'stable' },
  { name: 'seasonal_a', kind: 'seasonal' },
  { name: 'seasonal_b', kind: 'seasonal' },
  { name: 'rotating_few', kind: 'rotating', items: 600 },
  { name: 'rotating_many', kind: 'rotating', items: 6000 },
];

export interface SimOptions {
  rows: number;
  sampleSize: number;
  seed: number;
  window: number;
}

/** A fault applied to one feature of one day. */
export type SimFault = { kind: 'shift'; feature: string; sd: number } | { kind: 'stuck_items'; feature: string; share: number };

export type AdaptiveInput = NonNullable<NonNullable<ConfigInput['thresholds']>['adaptive']>;

export function simConfig(o: SimOptions, extra: { adaptive?: boolean; adaptiveOptions?: AdaptiveInput; mainLogic?: boolean } = {}): Config {
  return parseConfig(
    {
      source: { table: 'sim.impressions' },
      features: SIM_FEATURES.map((f) => ({ name: f.name })),
      baseline: { window: { type: 'trailing', days: o.window }, sampleSize: o.sampleSize },
      thresholds: {
        adaptive: { ...extra.adaptiveOptions, enabled: extra.adaptive ?? false },
        // Main's default before per-day distinct counts.
        ...(extra.mainLogic === true ? { distinct_ratio_drop: { warn: 0.5, critical: 0.9 } } : {}),
      },
    },
    'simulation config',
  );
}

function weekday(date: string): number {
  return new Date(`${date}T00:00:00Z`).getUTCDay();
}

/** The day's values of one feature (before faults). */
function featureValues(f: SimFeature, fi: number, date: string, dayIndex: number, o: SimOptions): Float64Array {
  const rand = mulberry32(o.seed * 7919 + dayIndex * 104729 + fi * 15485863);
  const out = new Float64Array(o.rows);
  if (f.kind === 'rotating') {
    const n = f.items!;
    const items = new Float64Array(n);
    for (let k = 0; k < n; k++) items[k] = Math.round((20 + 15 * normal12(rand)) * 100) / 100;
    for (let i = 0; i < o.rows; i++) out[i] = items[Math.floor(rand() * n)]!;
    return out;
  }
  let mean = fi * 3;
  if (f.kind === 'seasonal') {
    const wd = weekday(date);
    if (wd === 0 || wd === 6) mean += 0.6;
    // Promotion days: about one in ten, chosen by the day's own draw.
    if (mulberry32(o.seed + dayIndex * 31 + fi)() < 0.1) mean += 0.4;
  }
  for (let i = 0; i < o.rows; i++) out[i] = mean + normal12(rand);
  return out;
}

function applyFault(values: Float64Array, fault: SimFault, seed: number): void {
  if (fault.kind === 'shift') {
    for (let i = 0; i < values.length; i++) values[i] = values[i]! + fault.sd;
    return;
  }
  // A join that fills one default for a share of the items: every row of those items.
  const hit = new Map<number, boolean>();
  const rand = mulberry32(seed);
  for (let i = 0; i < values.length; i++) {
    const v = values[i]!;
    let h = hit.get(v);
    if (h === undefined) {
      h = rand() < fault.share;
      hit.set(v, h);
    }
    if (h) values[i] = 0;
  }
}

export function simColumns(date: string, dayIndex: number, o: SimOptions, faults: readonly SimFault[] = []): DayColumns {
  const rows = o.rows;
  const lists = Math.ceil(rows / LIST_SIZE);
  const listOf = new Int32Array(rows);
  const itemHash = new Float64Array(rows);
  const position = new Int32Array(rows);
  for (let i = 0; i < rows; i++) {
    listOf[i] = Math.floor(i / LIST_SIZE);
    itemHash[i] = i;
    position[i] = (i % LIST_SIZE) + 1;
  }
  const numeric = SIM_FEATURES.map((f, fi) => {
    const v = featureValues(f, fi, date, dayIndex, o);
    for (const fault of faults) if (fault.feature === f.name) applyFault(v, fault, o.seed + dayIndex);
    return v;
  });
  return {
    date,
    rows,
    totalRows: rows,
    sampled: false,
    listOf,
    lists,
    itemHash,
    position,
    label: null,
    numeric,
    missing: SIM_FEATURES.map(() => null),
    categorical: SIM_FEATURES.map(() => null),
  };
}

/** Stored (capped) day profiles of days 0 .. count - 1, as the store would hold them. */
export async function simStoredDays(o: SimOptions, count: number, config: Config): Promise<DayProfile[]> {
  const out: DayProfile[] = [];
  for (let d = 0; d < count; d++) out.push(capDayProfile(await buildDayProfile(simColumns(addDays(SIM_START, d), d, o), config, null), daySampleCap(config)));
  return out;
}

export function simBaseline(stored: readonly DayProfile[], dayIndex: number, config: Config, window: number): BaselineProfile {
  const days = stored.slice(dayIndex - window, dayIndex);
  return mergeBaseline(days, config, { fingerprint: `sim-${dayIndex}`, window: { type: 'trailing', from: days[0]!.date, to: days[days.length - 1]!.date }, createdAt: '2026-01-01T00:00:00.000Z' });
}

/** Findings of one day (with optional faults) against a baseline. */
export async function simEvaluate(config: Config, baseline: BaselineProfile, dayIndex: number, o: SimOptions, faults: readonly SimFault[] = []): Promise<Omit<Finding, 'alert'>[]> {
  const current = await buildDayProfile(simColumns(addDays(SIM_START, dayIndex), dayIndex, o, faults), config, baseline.bins);
  return evaluateDay(config, baseline, current);
}

export const LEVEL: Record<Status, number> = { ok: 0, warn: 1, critical: 2 };

/** The worst status among a feature's findings (of the given checks, or all). */
export function worstFor(findings: readonly Omit<Finding, 'alert'>[], feature: string, checks?: readonly string[]): Status {
  let worst: Status = 'ok';
  for (const f of findings) {
    if (f.feature !== feature || (checks !== undefined && !checks.includes(f.check))) continue;
    if (LEVEL[f.status] > LEVEL[worst]) worst = f.status;
  }
  return worst;
}

export interface Figures {
  cleanFeatureDays: number;
  /** Feature-days at warn or worse on any feature check, per 100 clean feature-days. */
  warningsPer100: Record<'main' | 'fixed' | 'adaptive', number>;
  /** Per 100 clean feature-days of the rotating features, distinct_ratio_drop at warn or worse. */
  distinctWarningsPer100: Record<'main' | 'fixed', number>;
  /** For each shift in sd: share of stable feature-days caught (psi or ks at warn or worse). */
  detection: { sd: number; fixed: number; adaptive: number }[];
  /** Smallest shift (sd) caught on every stable feature-day tried, per mode (null: none). */
  smallestCaught: Record<'fixed' | 'adaptive', number | null>;
  /** Rotating features with 30 % of their items stuck at one value: distinct_ratio_drop status. */
  stuck: { feature: string; status: Status; drop: number }[];
  /** Which checks warned on clean days, per mode (count of feature-days). */
  byCheck: Record<'main' | 'fixed' | 'adaptive', Record<string, number>>;
  /** The adaptive mode's warnings on clean days, one line each. */
  adaptiveWarnings: string[];
}

/**
 * Clean days window .. window + cleanDays - 1, each against the `window` days before it,
 * in three modes: main's logic (pooled distinct counts, fixed thresholds), fixed thresholds
 * with this version's checks, adaptive thresholds. Shifts of `shifts` sd go into each stable
 * feature on `shiftDays` of those days (one feature at a time, the day otherwise clean).
 */
export async function measure(o: SimOptions, cleanDays: number, shifts: readonly number[], shiftDays: number, adaptiveOptions: AdaptiveInput = {}): Promise<Figures> {
  const fixed = simConfig(o);
  const adaptive = simConfig(o, { adaptive: true, adaptiveOptions });
  const main = simConfig(o, { mainLogic: true });
  const stored = await simStoredDays(o, o.window + cleanDays, fixed);
  const warned = { main: 0, fixed: 0, adaptive: 0 };
  const distinctWarned = { main: 0, fixed: 0 };
  const byCheck: Figures['byCheck'] = { main: {}, fixed: {}, adaptive: {} };
  const caught = shifts.map(() => ({ fixed: 0, adaptive: 0, tried: 0 }));
  const stable = SIM_FEATURES.filter((f) => f.kind === 'stable').map((f) => f.name);
  const rotating = SIM_FEATURES.filter((f) => f.kind === 'rotating').map((f) => f.name);
  let stuck: Figures['stuck'] = [];
  const adaptiveWarnings: string[] = [];
  for (let d = o.window; d < o.window + cleanDays; d++) {
    const baseline = simBaseline(stored, d, fixed, o.window);
    // Main's logic: no per-day variation in the baseline (pooled distinct), main's thresholds, no extreme check.
    const { variation: _v, ...mainBaseline } = baseline;
    const modes = [
      ['main', main, mainBaseline as BaselineProfile],
      ['fixed', fixed, baseline],
      ['adaptive', adaptive, baseline],
    ] as const;
    for (const [mode, config, base] of modes) {
      const findings = (await simEvaluate(config, base, d, o)).filter((f) => !(mode === 'main' && f.check === 'extreme_value_ratio'));
      for (const f of SIM_FEATURES) {
        if (worstFor(findings, f.name) !== 'ok') warned[mode]++;
        for (const x of findings) {
          if (x.feature !== f.name || x.status === 'ok') continue;
          byCheck[mode][x.check] = (byCheck[mode][x.check] ?? 0) + 1;
          if (mode === 'adaptive') adaptiveWarnings.push(`${addDays(SIM_START, d)} ${x.feature} ${x.check}: ${x.summary}`);
        }
      }
      if (mode !== 'adaptive') for (const r of rotating) if (worstFor(findings, r, ['distinct_ratio_drop']) !== 'ok') distinctWarned[mode]++;
    }
    if (d - o.window < shiftDays) {
      for (const [i, sd] of shifts.entries()) {
        for (const feature of stable) {
          const faults = [{ kind: 'shift', feature, sd } as const];
          caught[i]!.tried++;
          if (worstFor(await simEvaluate(fixed, baseline, d, o, faults), feature, ['psi', 'ks']) !== 'ok') caught[i]!.fixed++;
          if (worstFor(await simEvaluate(adaptive, baseline, d, o, faults), feature, ['psi', 'ks']) !== 'ok') caught[i]!.adaptive++;
        }
      }
    }
    if (d === o.window) {
      const findings = await simEvaluate(fixed, baseline, d, o, rotating.map((feature) => ({ kind: 'stuck_items', feature, share: 0.3 }) as const));
      stuck = rotating.map((feature) => {
        const x = findings.find((f) => f.feature === feature && f.check === 'distinct_ratio_drop')!;
        return { feature, status: x.status, drop: x.value };
      });
    }
  }
  const featureDays = cleanDays * SIM_FEATURES.length;
  const rotatingDays = cleanDays * rotating.length;
  const detection = shifts.map((sd, i) => ({ sd, fixed: caught[i]!.fixed / caught[i]!.tried, adaptive: caught[i]!.adaptive / caught[i]!.tried }));
  const smallest = (mode: 'fixed' | 'adaptive'): number | null => detection.find((x) => x[mode] === 1)?.sd ?? null;
  return {
    cleanFeatureDays: featureDays,
    warningsPer100: { main: (100 * warned.main) / featureDays, fixed: (100 * warned.fixed) / featureDays, adaptive: (100 * warned.adaptive) / featureDays },
    distinctWarningsPer100: { main: (100 * distinctWarned.main) / rotatingDays, fixed: (100 * distinctWarned.fixed) / rotatingDays },
    detection,
    smallestCaught: { fixed: smallest('fixed'), adaptive: smallest('adaptive') },
    stuck,
    byCheck,
    adaptiveWarnings,
  };
}
