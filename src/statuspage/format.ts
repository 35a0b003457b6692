/**
 * How statuses, checks and numbers read on the status page: labels, units, symbols and
 * colours. Status is always written out (symbol + word); colour only repeats it.
 */
import type { AppliedThresholds, Status } from '../report/index.ts';

export interface StatusStyle {
  /** Shape that tells the status apart without colour. */
  symbol: string;
  label: string;
  /** Text colour on `background` (WCAG 2.1 contrast at least 4.5:1, checked in the tests). */
  text: string;
  background: string;
  /** Colour of chart markers and the cell's side bar on white (at least 3:1, non-text contrast). */
  mark: string;
}

/**
 * Hues from the Okabe-Ito palette (blue, orange, vermilion), which stay distinct under the
 * common colour-vision deficiencies; darkened where text or thin marks need contrast.
 */
export const STATUS_STYLE: Record<Status, StatusStyle> = {
  critical: { symbol: '✖', label: 'critical', text: '#8f2a00', background: '#fde3d7', mark: '#d55e00' },
  warn: { symbol: '▲', label: 'warn', text: '#6b4800', background: '#fcefc5', mark: '#c27400' },
  ok: { symbol: '✓', label: 'ok', text: '#0b5c8a', background: '#e8f2f9', mark: '#0072b2' },
};

/** A cell with no finding: the check does not apply to this feature or did not run. */
export const NOT_APPLICABLE = { symbol: '–', label: 'not checked', text: '#5c6673' } as const;

export const STATUSES: readonly Status[] = ['critical', 'warn', 'ok'];

export function isStatus(s: unknown): s is Status {
  return s === 'ok' || s === 'warn' || s === 'critical';
}

/** How a check's value is written. */
export type Unit = 'number' | 'share' | 'times' | 'flag';

export interface CheckInfo {
  /** Short column label. */
  label: string;
  unit: Unit;
  /** Thresholds apply to the increase of the value over its baseline (evidence.baseline). */
  increase: boolean;
  /** One line for people who do not know the check by name. */
  about: string;
  /** Thresholds apply to the size of the change from the baseline, up or down (ranking checks). */
  change?: boolean;
}

const info = (label: string, unit: Unit, increase: boolean, about: string): CheckInfo => ({ label, unit, increase, about });
const changeInfo = (label: string, about: string): CheckInfo => ({ label, unit: 'number', increase: false, about, change: true });

export const CHECK_INFO: Record<string, CheckInfo> = {
  psi: info('PSI', 'number', false, 'Population stability index over the baseline’s quantile bins'),
  ks: info('KS D', 'number', false, 'Largest gap between the baseline and current cumulative distributions (two-sample Kolmogorov-Smirnov)'),
  null_ratio: info('nulls', 'share', true, 'Share of rows where the feature is null'),
  nonfinite_ratio: info('NaN / ∞', 'share', true, 'Share of rows that are NaN or infinite'),
  type_error_ratio: info('type errors', 'share', true, 'Share of rows whose value is not a number'),
  out_of_range_ratio: info('out of range', 'share', true, 'Share of finite values outside the declared range'),
  constant: info('constant', 'flag', false, 'The feature took a single value where the baseline varied'),
  distinct_ratio_drop: info('distinct drop', 'share', false, 'Drop in distinct values against the baseline days’ median, each at the day’s sample size'),
  extreme_value_ratio: info('beyond extremes', 'share', true, 'Share of values beyond the baseline’s extremes (its 0.1 % and 99.9 % quantiles widened by a multiple of the IQR)'),
  new_category_ratio: info('new categories', 'share', false, 'Share of rows in categories the baseline never saw'),
  category_cardinality: info('distinct categories', 'number', false, 'Distinct categories of the day (thresholds on the ratio to the baseline’s)'),
  rule_violation_ratio: info('rule violations', 'share', true, 'Share of lists in which the feature breaks its within-list rule'),
  flat_list_ratio: info('flat lists', 'share', true, 'Share of lists in which the feature does not vary'),
  snapshot_missing: info('snapshot missing', 'flag', false, 'The source had no rows for the date'),
  row_count_ratio: info('rows vs baseline', 'times', false, 'Rows of the day against the baseline’s daily mean'),
  list_count_ratio: info('lists vs baseline', 'times', false, 'Lists of the day against the baseline’s daily mean'),
  list_size_psi: info('list size PSI', 'number', false, 'Population stability index of the list-size distribution'),
  duplicate_item_ratio: info('duplicate items', 'share', true, 'Share of lists that hold an item twice'),
  position_gap_ratio: info('position gaps', 'share', true, 'Share of lists whose positions skip a number'),
  null_list_id_ratio: info('rows without list id', 'share', true, 'Share of rows with no list id'),
  null_item_id_ratio: info('rows without item id', 'share', true, 'Share of rows with no item id'),
  null_label_ratio: info('rows without label', 'share', true, 'Share of rows in lists whose label is null (left out of the positive rate)'),
  singleton_list_ratio: info('single-item lists', 'share', true, 'Share of lists with one item'),
  label_positive_ratio: info('positive label rate', 'times', false, 'Positive label rate against the baseline’s'),
  no_positive_list_ratio: info('lists without a positive', 'share', true, 'Share of lists with no positive label'),
  position_rank_correlation: changeInfo('order association', 'Mean over lists of the Spearman correlation between the feature and the position (1 = top) inside each list'),
  score_rank_correlation: changeInfo('score association', 'Mean over lists of the Spearman correlation between the feature and the model score inside each list'),
  mean_reciprocal_rank: changeInfo('MRR', 'Mean reciprocal rank of the first positive label in served order, over lists with a positive'),
  ndcg: changeInfo('NDCG@k', 'Mean NDCG@k of the labels in served order, over lists with a positive'),
  positive_position_psi: info('click curve PSI', 'number', false, 'Population stability index of positive labels over served ranks 1, 2, 3, 4-5, 6-10, 11-20, 21+'),
};

export function checkInfo(check: string): CheckInfo {
  return CHECK_INFO[check] ?? { label: check, unit: 'number', increase: false, about: '' };
}

/** A plain number: short, thousands separated, never a bare "NaN". */
export function num(x: number | null | undefined): string {
  if (x === null || x === undefined) return 'n/a';
  if (Number.isNaN(x)) return 'NaN';
  if (!Number.isFinite(x)) return x > 0 ? '+∞' : '−∞';
  if (x === 0) return '0';
  const a = Math.abs(x);
  if (a >= 1000) return Math.round(x).toLocaleString('en-US');
  if (a >= 1e-4) return String(Number(x.toPrecision(3)));
  return x.toExponential(1);
}

/** A share as a percentage: 0.0523 -> "5.23%". */
export function pct(x: number | null | undefined): string {
  if (x === null || x === undefined) return 'n/a';
  if (!Number.isFinite(x)) return num(x);
  const p = x * 100;
  if (p === 0) return '0%';
  const a = Math.abs(p);
  const digits = a >= 10 ? 1 : a >= 1 ? 2 : a >= 0.01 ? 3 : -1;
  const text = digits < 0 ? p.toExponential(1) : String(Number(p.toFixed(digits)));
  return `${text}%`;
}

export function formatUnit(unit: Unit, x: number | null | undefined): string {
  if (x === null || x === undefined) return 'n/a';
  switch (unit) {
    case 'share':
      return pct(x);
    case 'times':
      return `${num(x)}×`;
    case 'flag':
      return x >= 0.5 ? 'yes' : 'no';
    default:
      return num(x);
  }
}

export function formatValue(check: string, x: number | null | undefined): string {
  return formatUnit(checkInfo(check).unit, x);
}

/** The thresholds a finding was judged by, in words. */
export function describeThresholds(check: string, t: AppliedThresholds | undefined): string {
  const c = checkInfo(check);
  if (t === undefined) return 'n/a';
  if (t.type === 'flag' || c.unit === 'flag') return 'critical when set';
  if (c.change === true && t.type === 'above') return `warn at a change of ±${num(t.warn)}, critical at ±${num(t.critical)} from the baseline, once beyond its noise`;
  if (t.type === 'band') {
    const f = (x: number): string => formatUnit(c.unit, x);
    return `ok within ${f(t.warnBelow)} – ${f(t.warnAbove)}; critical below ${f(t.criticalBelow)} or above ${f(t.criticalAbove)}`;
  }
  const f = (x: number): string => (c.increase ? `+${formatUnit(c.unit, x)}` : formatUnit(c.unit, x));
  const over = c.increase ? ' over baseline' : '';
  const learned = t.learned === true ? ' (learned from the baseline’s day-to-day variation)' : '';
  return `warn at ${f(t.warn)}, critical at ${f(t.critical)}${over}${learned}`;
}

/** Evidence keys in words; other keys are split at their capitals. */
const EVIDENCE_LABEL: Record<string, string> = {
  baseline: 'baseline',
  current: 'current',
  n: 'baseline values compared (n)',
  m: 'current values compared (m)',
  pValue: 'p-value',
  pValueMethod: 'p-value method',
  adjustedPValue: 'adjusted p-value (Benjamini-Hochberg)',
  noiseFloor: 'noise floor',
  noise: 'no-change noise (standard deviation)',
  z: 'change / noise',
  lists: 'lists judged',
  oppositeSignShare: 'lists against the baseline’s sign',
  baselineOppositeSignShare: 'lists against the sign, baseline days',
  baselineDaySd: 'spread of the baseline’s daily means',
  betweenDaySd: 'day-to-day spread beyond sampling',
  currentSe: 'standard error of the day’s mean',
  outcomeDate: 'labels of',
  binsUsed: 'bins in use',
  listsJudged: 'lists judged',
  flatLists: 'flat lists',
  violations: 'lists breaking the rule',
  tolerance: 'tolerance',
  unseen: 'unseen categories',
  unseenCount: 'unseen categories (count)',
  comparedValues: 'values compared',
  learnedThreshold: 'threshold learned',
  alertRule: 'alerting by',
  mostExtreme: 'most extreme value',
  outOfRange: 'values out of range',
  finite: 'finite values',
  typeErrors: 'non-numeric values',
  posInf: '+∞ values',
  negInf: '−∞ values',
  nan: 'NaN values',
};

export function evidenceLabel(key: string): string {
  return EVIDENCE_LABEL[key] ?? key.replace(/([a-z0-9])([A-Z])/g, '$1 $2').toLowerCase();
}

/** A date written YYYY-MM-DD that exists in the calendar. */
export function isCalendarDate(s: string): boolean {
  if (!/^\d{4}-\d{2}-\d{2}$/.test(s)) return false;
  const d = new Date(`${s}T00:00:00Z`);
  return !Number.isNaN(d.getTime()) && d.toISOString().startsWith(s);
}

export function addDays(date: string, days: number): string {
  const d = new Date(`${date}T00:00:00Z`);
  d.setUTCDate(d.getUTCDate() + days);
  return d.toISOString().slice(0, 10);
}

/** "2031-05-15T06:31:12.500Z" -> "2031-05-15 06:31 UTC"; anything else as given. */
export function timestamp(iso: string | undefined): string {
  if (iso === undefined) return 'n/a';
  const ms = Date.parse(iso);
  if (Number.isNaN(ms)) return iso;
  return `${new Date(ms).toISOString().slice(0, 16).replace('T', ' ')} UTC`;
}
