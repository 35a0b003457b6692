/**
 * Checks per slice (src/profile/slices.ts): every feature check of evaluateDay runs on each
 * slice's profile against that slice's own baseline, and the findings carry the slice's
 * name. Pure, like evaluate.ts.
 *
 * Multiple testing: a day with many slices runs many more tests, so the tests that have a
 * p-value are gated by Benjamini-Hochberg across every slice of the day (one family for KS,
 * one for PSI), rather than per slice. The whole day (slice "all") keeps its own family,
 * so turning slices on changes none of its findings.
 */
import type { Config } from '../config/index.ts';
import { EMPTY_DATASET, WHOLE_DAY, type BaselineProfile, type DayProfile } from '../profile/index.ts';
import { benjaminiHochberg, chiSquareSurvival } from '../stats/index.ts';
import { evaluateDay, gateKs, type FindingDraft } from './evaluate.ts';
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

/**
 * P-value of a PSI under no shift: PSI / (1/n + 1/m) is approximately chi-square with B - 1
 * degrees of freedom (Yurdakul & Naranjo 2020), the distribution the noise floor is a
 * quantile of.
 */
function psiPValue(draft: FindingDraft): number | null {
  const n = draft.evidence.n;
  const m = draft.evidence.m;
  const bins = draft.evidence['binsUsed'];
  if (typeof n !== 'number' || typeof m !== 'number' || typeof bins !== 'number' || n <= 0 || m <= 0 || bins < 2) return null;
  return chiSquareSurvival(draft.value / (1 / n + 1 / m), bins - 1);
}

/**
 * The findings of the whole day (slice "all") followed by the feature findings of every
 * slice, before alert hysteresis.
 */
export function evaluateSlices(config: Config, baseline: BaselineProfile, current: DayProfile, slices: readonly SliceInput[]): FindingDraft[] {
  const out: FindingDraft[] = evaluateDay(config, baseline, current).map((d) => ({ slice: WHOLE_DAY, ...d }));
  const ks: { draft: FindingDraft; p: number }[] = [];
  const psi: { draft: FindingDraft; p: number }[] = [];
  for (const s of slices) {
    if (s.current.dataset.rows === 0) continue;
    for (const d of evaluateDay(config, s.baseline ?? noBaseline(baseline), s.current)) {
      if (d.feature === null) continue;
      const draft: FindingDraft = { slice: s.slice, ...d };
      out.push(draft);
      if (draft.check === 'ks' && typeof draft.evidence.pValue === 'number') ks.push({ draft, p: draft.evidence.pValue });
      if (draft.check === 'psi') {
        const p = psiPValue(draft);
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
