/**
 * Checks per slice (src/profile/slices.ts): every feature check of evaluateDay runs on each
 * slice's profile against that slice's own baseline, and the findings carry the slice's
 * name. Pure, like evaluate.ts.
 *
 * Multiple testing: a day with many slices runs many more tests, so the tests that have a
 * p-value are gated by Benjamini-Hochberg across every slice of the day (one family for KS,
 * one for PSI), rather than per slice; their p-values count lists, not rows (see
 * `effective`). The whole day (slice "all") keeps its own family,
 * so turning slices on changes none of its findings.
 */
import type { Config } from '../config/index.ts';
import { EMPTY_DATASET, WHOLE_DAY, type BaselineProfile, type DayProfile } from '../profile/index.ts';
import { benjaminiHochberg, chiSquareSurvival, ksPValue } from '../stats/index.ts';
import { evaluateDay, gateKs, type FindingDraft } from './evaluate.ts';
import type { OutcomeInput } from './ranking.ts';
import { fmt } from './status.ts';

export interface SliceInput {
  slice: string;
  /** The slice's baseline, or null when no baseline day had rows of it. */
  baseline: BaselineProfile | null;
  current: DayProfile;
}

/** A baseline without days: the checks that need one stay silent, the quality checks run. */
function noBaseline(like: BaselineProfile): BaselineProfile {
  return { fingerprint: '', window: like.window, days: [], dataset: EMPTY_DATASET, bins: {}, features: {}, sampleSize: 0, createdAt: like.createdAt };
}

/** Above this n x m a KS p-value is taken from the Kolmogorov limit (the exact one costs O(n m)). */
const EXACT_KS_MAX_WORK = 5_000_000;

/**
 * Effective sample sizes of a slice test. Rows of one list are not independent (a list-level
 * feature repeats one value on every row; item features share the query's intent), and a
 * segment slice may hold a few dozen lists of hundreds of rows. Counting each list as one
 * observation is the conservative end of the design effect: n and m are capped at the lists
 * of the baseline and of the day.
 */
function effective(draft: FindingDraft, baseLists: number, curLists: number): { n: number; m: number } | null {
  const n = draft.evidence.n;
  const m = draft.evidence.m;
  if (typeof n !== 'number' || typeof m !== 'number' || n < 1 || m < 1) return null;
  return { n: Math.max(1, Math.min(Math.round(n), baseLists)), m: Math.max(1, Math.min(Math.round(m), curLists)) };
}

/**
 * P-value of a PSI under no shift: PSI / (1/n + 1/m) is approximately chi-square with B - 1
 * degrees of freedom (Yurdakul & Naranjo 2020), the distribution the noise floor is a
 * quantile of.
 */
function psiPValue(draft: FindingDraft, size: { n: number; m: number }): number | null {
  const bins = draft.evidence['binsUsed'];
  if (typeof bins !== 'number' || bins < 2) return null;
  return chiSquareSurvival(draft.value / (1 / size.n + 1 / size.m), bins - 1);
}

/**
 * The findings of the whole day (slice "all"; `outcome` as for evaluateDay) followed by the
 * feature findings of every slice, before alert hysteresis.
 */
export function evaluateSlices(config: Config, baseline: BaselineProfile, current: DayProfile, slices: readonly SliceInput[], outcome?: OutcomeInput): FindingDraft[] {
  const out: FindingDraft[] = evaluateDay(config, baseline, current, outcome).map((d) => ({ slice: WHOLE_DAY, ...d }));
  const ks: { draft: FindingDraft; p: number }[] = [];
  const psi: { draft: FindingDraft; p: number }[] = [];
  for (const s of slices) {
    if (s.current.dataset.rows === 0) continue;
    const baseLists = s.baseline?.dataset.lists ?? 0;
    for (const d of evaluateDay(config, s.baseline ?? noBaseline(baseline), s.current)) {
      if (d.feature === null) continue;
      const draft: FindingDraft = { slice: s.slice, ...d };
      out.push(draft);
      if (draft.check !== 'ks' && draft.check !== 'psi') continue;
      const size = effective(draft, baseLists, s.current.dataset.lists);
      if (size === null) continue;
      draft.evidence['effectiveN'] = size.n;
      draft.evidence['effectiveM'] = size.m;
      if (draft.check === 'ks') {
        const p = ksPValue(Math.min(1, draft.value), size.n, size.m, size.n * size.m > EXACT_KS_MAX_WORK ? 'asymptotic' : 'auto');
        draft.evidence.pValue = p.pValue;
        draft.evidence['pValueMethod'] = p.method;
        ks.push({ draft, p: p.pValue });
      } else {
        const p = psiPValue(draft, size);
        if (p !== null) psi.push({ draft, p });
      }
    }
  }
  gateKs(config, ks);
  if (psi.length > 0) {
    const alpha = 1 - config.thresholds.psiNoiseQuantile;
    const adjusted = benjaminiHochberg(psi.map((x) => x.p));
    psi.forEach(({ draft, p }, i) => {
      const adj = adjusted[i]!;
      draft.evidence['pValue'] = p;
      draft.evidence.adjustedPValue = adj;
      if (adj >= alpha && draft.status !== 'ok') {
        draft.status = 'ok';
        draft.summary += `; ok across ${psi.length} slice tests (adjusted p ${fmt(adj)})`;
      }
    });
  }
  return out;
}
