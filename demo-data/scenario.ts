/**
 * The demo scenario: Brindlemoss, an invented marketplace where hobby growers sell
 * plant cuttings to each other, and the search rankings its learning-to-rank model
 * produced, one row per ranked item. Everything here is made up; see README.md.
 *
 * The generator is deterministic: the same seed and date give the same rows on every
 * machine. Each day, each list and each catalogue item draws from a random stream of
 * its own (seeded by a hash), and faults draw from separate streams, so a day with a
 * fault differs from the same day without it only where the fault acts.
 */
import { hashInts, hashString, Random } from './random.ts';

export interface ScenarioOptions {
  /** First day, YYYY-MM-DD. */
  startDate: string;
  days: number;
  /** Mean number of lists (query impressions) per day over a week. */
  listsPerDay: number;
  /** Mean number of ranked items per list (lists have at least 2 items). */
  meanListSize: number;
  seed: number;
  faults?: FaultPlan[];
}

export type FaultKind =
  | 'mean_shift'
  | 'unit_change'
  | 'null_spike'
  | 'minmax_raw'
  | 'stuck_default'
  | 'flat_within_lists'
  | 'list_truncation'
  | 'new_category'
  | 'nonfinite'
  | 'creeping_drift'
  | 'duplicate_items'
  | 'type_error'
  | 'overflow'
  | 'polarity_flip'
  | 'shuffle_within_lists'
  | 'order_scrambled';

/**
 * One fault, active from `date` to `untilDate` (inclusive; default: `date` only).
 * `amount` by kind (default in brackets):
 * - mean_shift: shift in nominal standard deviations [0.5]; on a binary feature, the
 *   probability that a 0 becomes 1
 * - creeping_drift: shift in nominal sds added per day, k+1 times on the k-th day [0.05]
 * - unit_change: factor [100]
 * - null_spike, nonfinite, type_error: fraction of rows hit [0.2, 0.01, 0.01]
 * - overflow: fraction of rows whose value becomes 1e308 (an overflow upstream) [0.1]
 * - stuck_default: the value every row gets [0]
 * - list_truncation: fraction of each list kept [0.5]
 * - new_category: share of items moved to the new category [0.3]
 * - duplicate_items: fraction of lists (of 3 or more items) with one item twice [0.2]
 * - order_scrambled: fraction of lists served in a random order [0.3]
 * - minmax_raw, flat_within_lists, polarity_flip, shuffle_within_lists: no amount
 *
 * polarity_flip (a sort in the wrong direction: inside each list the item with the k-th
 * largest value gets the k-th smallest), shuffle_within_lists (a join on the wrong key inside
 * the list) and order_scrambled (a fallback ranker, a stale cache: the list is served in a
 * random order, and users click what they are shown) keep every list's multiset of feature
 * values, so every feature's day-wide distribution is the one of a clean day.
 */
export interface FaultPlan {
  date: string;
  kind: FaultKind;
  feature?: string;
  /** e.g. shift size, fraction */
  amount?: number;
  untilDate?: string;
}

export interface Row {
  snapshot_date: string;
  list_id: string | null;
  item_id: string;
  position: number;
  clicked: number | null;
  model_score: number;
  [feature: string]: string | number | null;
}

export interface FeatureSpec {
  name: string;
  kind: 'numeric' | 'binary' | 'categorical';
  scope: 'item' | 'list';
  rule?: 'minmax' | 'zscore' | 'rank' | 'sum_to_one';
  range?: { min?: number; max?: number };
}

/** Plant families of the catalogue (the categorical feature). */
export const CATEGORIES = ['succulent', 'aroid', 'fern', 'cactus', 'herb', 'carnivorous'] as const;
/** The category a `new_category` fault introduces. */
export const NEW_CATEGORY = 'seed_kit';
/** Column names of the label and the model score. */
export const LABEL_COLUMN = 'clicked';
export const SCORE_COLUMN = 'model_score';

/** The features in column order. Ranges are what the listing form and the pipeline promise. */
export const FEATURES: readonly FeatureSpec[] = [
  { name: 'text_match', kind: 'numeric', scope: 'item', range: { min: 0 } },
  { name: 'text_match_norm', kind: 'numeric', scope: 'item', rule: 'minmax', range: { min: 0, max: 1 } },
  { name: 'semantic_similarity', kind: 'numeric', scope: 'item', range: { min: -1, max: 1 } },
  { name: 'price', kind: 'numeric', scope: 'item', range: { min: 0.5, max: 1000 } },
  { name: 'price_z', kind: 'numeric', scope: 'item', rule: 'zscore' },
  { name: 'popularity_rank', kind: 'numeric', scope: 'item', rule: 'rank', range: { min: 1 } },
  { name: 'click_share', kind: 'numeric', scope: 'item', rule: 'sum_to_one', range: { min: 0, max: 1 } },
  { name: 'review_count', kind: 'numeric', scope: 'item', range: { min: 0 } },
  { name: 'seller_rating', kind: 'numeric', scope: 'item', range: { min: 1, max: 5 } },
  { name: 'listing_age_days', kind: 'numeric', scope: 'item', range: { min: 0 } },
  { name: 'photo_quality', kind: 'numeric', scope: 'item', range: { min: 0, max: 1 } },
  { name: 'query_length', kind: 'numeric', scope: 'list', range: { min: 1, max: 32 } },
  { name: 'ships_free', kind: 'binary', scope: 'item' },
  { name: 'plant_family', kind: 'categorical', scope: 'item' },
];

/** Features that are null on clean days too (a seller without ratings has none). */
export const NULLABLE_FEATURES: readonly string[] = ['seller_rating'];

/**
 * Nominal standard deviation of each numeric feature on clean days, the unit of
 * `mean_shift` and `creeping_drift`. Population sd over the 28 clean days of DEMO_SCENARIO
 * (seed 20250203), three significant digits (tests check they stay within 15 % of a fresh clean day).
 */
export const NOMINAL_SD: Readonly<Record<string, number>> = {
  text_match: 1.68,
  text_match_norm: 0.272,
  semantic_similarity: 0.27,
  price: 21.8,
  price_z: 1,
  popularity_rank: 7.07,
  click_share: 0.0566,
  review_count: 21.2,
  seller_rating: 0.289,
  listing_age_days: 25.6,
  photo_quality: 0.17,
  query_length: 1.2,
};

// ---------------------------------------------------------------- the demo's story

/** Table the demo loads (see plumbline.demo.yaml). */
export const DEMO_TABLE = 'demo.brindlemoss_impressions';
/** Same data with the features in one jsonb column `features`. */
export const DEMO_TABLE_JSONB = 'demo.brindlemoss_impressions_jsonb';

/**
 * The demo's five weeks and a day: 28 clean days (2025-02-03 to 2025-03-02), then eight
 * days in which something breaks every day. README.md tells the story day by day and what
 * Plumbline should report; keep the two in step.
 */
export const DEMO_FAULTS: FaultPlan[] = [
  // A bulk-import tool starts repeating description text: term-frequency scores creep up.
  { date: '2025-03-03', untilDate: '2025-03-09', kind: 'creeping_drift', feature: 'text_match', amount: 0.06 },
  // Mon: a currency-service release reports prices in cents for one day.
  { date: '2025-03-03', kind: 'unit_change', feature: 'price', amount: 100 },
  // Tue: the review service times out for a fifth of the catalogue.
  { date: '2025-03-04', kind: 'null_spike', feature: 'review_count', amount: 0.2 },
  // Wed: a config flag skips the per-list normalisation of the text score.
  { date: '2025-03-05', kind: 'minmax_raw', feature: 'text_match_norm' },
  // Thu: the photo-score cache is keyed by query, so every item of a list gets one score.
  { date: '2025-03-06', kind: 'flat_within_lists', feature: 'photo_quality' },
  // Fri: a retrieval timeout returns 40 % of the candidates.
  { date: '2025-03-07', kind: 'list_truncation', amount: 0.4 },
  // Sat: seed kits launch as a new category and take a large share of results.
  { date: '2025-03-08', kind: 'new_category', feature: 'plant_family', amount: 0.3 },
  // Sat-Sun: a retrained embedding model ships without recalibration.
  { date: '2025-03-08', untilDate: '2025-03-09', kind: 'mean_shift', feature: 'semantic_similarity', amount: 0.6 },
  // Mon (week six): a refactored join hands out the normalised text scores in reverse order inside each list.
  { date: '2025-03-10', kind: 'polarity_flip', feature: 'text_match_norm' },
];

/** The demo's scenario: five weeks and a day, about 400 lists of about 20 items a day. */
export const DEMO_SCENARIO: ScenarioOptions = {
  startDate: '2025-02-03',
  days: 36,
  listsPerDay: 400,
  meanListSize: 20,
  seed: 20250203,
  faults: DEMO_FAULTS,
};

// ---------------------------------------------------------------- dates

const DATE_RE = /^\d{4}-\d{2}-\d{2}$/;

/** Days since 1970-01-01 of a YYYY-MM-DD date (UTC). */
export function epochDay(date: string): number {
  if (!DATE_RE.test(date)) throw new RangeError(`expected a date written YYYY-MM-DD, got ${JSON.stringify(date)}`);
  const ms = Date.parse(`${date}T00:00:00Z`);
  if (Number.isNaN(ms) || new Date(ms).toISOString().slice(0, 10) !== date) throw new RangeError(`not a calendar date: ${date}`);
  return ms / 86_400_000;
}

export function addDays(date: string, days: number): string {
  return new Date((epochDay(date) + days) * 86_400_000).toISOString().slice(0, 10);
}

/** The scenario's dates, oldest first. */
export function scenarioDates(options: ScenarioOptions): string[] {
  const out: string[] = [];
  for (let i = 0; i < options.days; i++) out.push(addDays(options.startDate, i));
  return out;
}

/** The same scenario starting on another date, with every fault moved by as many days. */
export function withStartDate(options: ScenarioOptions, startDate: string): ScenarioOptions {
  const shift = epochDay(startDate) - epochDay(options.startDate);
  return {
    ...options,
    startDate,
    faults: options.faults?.map((f) => ({ ...f, date: addDays(f.date, shift), ...(f.untilDate !== undefined ? { untilDate: addDays(f.untilDate, shift) } : {}) })),
  };
}

/** Faults active on a date, in the order given. */
export function faultsOn(options: ScenarioOptions, date: string): FaultPlan[] {
  return (options.faults ?? []).filter((f) => f.date <= date && date <= (f.untilDate ?? f.date));
}

// ---------------------------------------------------------------- validation

const FEATURE_BY_NAME = new Map(FEATURES.map((f) => [f.name, f]));
const STRUCTURAL: ReadonlySet<FaultKind> = new Set(['list_truncation', 'duplicate_items', 'order_scrambled']);

function validateOptions(options: ScenarioOptions): void {
  epochDay(options.startDate);
  if (!Number.isInteger(options.days) || options.days < 0) throw new RangeError(`days must be a whole number >= 0, got ${options.days}`);
  if (!(options.listsPerDay >= 0) || !Number.isFinite(options.listsPerDay)) throw new RangeError(`listsPerDay must be >= 0, got ${options.listsPerDay}`);
  if (!(options.meanListSize >= 2) || !Number.isFinite(options.meanListSize)) throw new RangeError(`meanListSize must be >= 2, got ${options.meanListSize}`);
  if (!Number.isInteger(options.seed)) throw new RangeError(`seed must be an integer, got ${options.seed}`);
  for (const [i, f] of (options.faults ?? []).entries()) {
    const where = `faults[${i}] (${f.kind})`;
    epochDay(f.date);
    if (f.untilDate !== undefined && epochDay(f.untilDate) < epochDay(f.date)) throw new RangeError(`${where}: untilDate is before date`);
    if (f.amount !== undefined && !Number.isFinite(f.amount)) throw new RangeError(`${where}: amount must be a finite number`);
    if (STRUCTURAL.has(f.kind)) continue;
    if (f.feature === undefined) throw new RangeError(`${where}: needs a feature`);
    const spec = FEATURE_BY_NAME.get(f.feature);
    if (spec === undefined) throw new RangeError(`${where}: unknown feature ${f.feature}`);
    const numericOnly: FaultKind[] = ['unit_change', 'creeping_drift', 'nonfinite', 'type_error', 'overflow'];
    if (numericOnly.includes(f.kind) && spec.kind !== 'numeric') throw new RangeError(`${where}: needs a numeric feature`);
    if (f.kind === 'mean_shift' && spec.kind === 'categorical') throw new RangeError(`${where}: cannot shift a categorical feature`);
    if (f.kind === 'minmax_raw' && spec.rule !== 'minmax') throw new RangeError(`${where}: needs a feature with the minmax rule`);
    if (f.kind === 'new_category' && spec.kind !== 'categorical') throw new RangeError(`${where}: needs a categorical feature`);
    if (f.kind === 'flat_within_lists' && spec.scope === 'list') throw new RangeError(`${where}: a list-level feature is flat already`);
    if ((f.kind === 'polarity_flip' || f.kind === 'shuffle_within_lists') && (spec.scope === 'list' || spec.kind === 'categorical')) throw new RangeError(`${where}: needs an item-level numeric or binary feature`);
  }
}

// ---------------------------------------------------------------- the catalogue

const FAMILY_MEDIAN_PRICE = [9, 28, 12, 11, 6, 19];
/** Share of queries per plant family; weekend shoppers lean to pricier families. */
const WEEKDAY_INTENT = [0.24, 0.2, 0.14, 0.16, 0.14, 0.12];
const WEEKEND_INTENT = [0.22, 0.23, 0.135, 0.15, 0.12, 0.145];
const CATALOG_PER_FAMILY = 10_000;
/** List counts relative to the weekly mean: 5 x 0.92 + 2 x 1.2 = 7. */
const WEEKDAY_TRAFFIC = 0.92;
const WEEKEND_TRAFFIC = 1.2;

interface Item {
  /** Catalogue number: family * CATALOG_PER_FAMILY + rank in family (0 = most popular). */
  id: number;
  family: number;
  price: number;
  shipsFree: number;
  sellerRating: number | null;
  photoQuality: number;
  reviewCount: number;
  /** Listings expire and are relisted every `lifetime` days, so ages stay stationary. */
  lifetime: number;
  phase: number;
  hour: number;
  /** Log of the expected clicks in the last 7 days. */
  popularity: number;
}

const round = (x: number, digits: number): number => {
  const f = 10 ** digits;
  return Math.round(x * f) / f;
};
const clamp = (x: number, lo: number, hi: number): number => Math.min(hi, Math.max(lo, x));
const sigmoid = (x: number): number => 1 / (1 + Math.exp(-x));

// Items repeat across lists (popular ones often), so each is built once per seed.
let cacheSeed: number | undefined;
let itemCache = new Map<number, Item>();

function catalogItem(seed: number, id: number): Item {
  if (cacheSeed !== seed) {
    cacheSeed = seed;
    itemCache = new Map();
  }
  let item = itemCache.get(id);
  if (item === undefined) {
    item = buildItem(seed, id);
    itemCache.set(id, item);
  }
  return item;
}

function buildItem(seed: number, id: number): Item {
  const r = new Random(hashInts(seed, 0x17e3, id));
  const family = Math.floor(id / CATALOG_PER_FAMILY);
  const rankInFamily = id % CATALOG_PER_FAMILY;
  const price = clamp(round(FAMILY_MEDIAN_PRICE[family] * Math.exp(r.normal(0, 0.75)), 2), 0.5, 1000);
  const shipsFree = r.bernoulli(price > 25 ? 0.55 : 0.3) ? 1 : 0;
  const sellerRating = r.bernoulli(0.05) ? null : clamp(round(5 - r.lognormal(-1.0, 0.6), 1), 1, 5);
  const photoQuality = round(sigmoid(r.normal(0.9, 0.9)), 4);
  const reviewCount = Math.max(0, Math.floor(r.lognormal(1.0, 1.5)) - 1);
  const lifetime = 20 + Math.floor(r.lognormal(Math.log(45), 0.5));
  const phase = r.int(lifetime);
  const hour = r.uniform();
  const popularity = 3.0 - (5 * rankInFamily) / CATALOG_PER_FAMILY + r.normal(0, 0.6);
  return { id, family, price, shipsFree, sellerRating, photoQuality, reviewCount, lifetime, phase, hour, popularity };
}

/** Candidate of one list: a catalogue item plus what this query and day make of it. */
interface Candidate {
  item: Item;
  relevance: number;
  textNoise: number;
  semanticNoise: number;
  scoreNoise: number;
  clickDraw: number;
  recentClicks: number;
}

// ---------------------------------------------------------------- one day

const NUMERIC_FEATURES = FEATURES.filter((f) => f.kind === 'numeric').map((f) => f.name);

type Value = number | string | null;

/**
 * The rows of one day, list by list, each list in position order. Lists of a day are
 * independent, so the generator streams: memory stays flat however many lists a day has.
 * Cost: O(rows), about 10 uniforms and a sort of each list per day's row.
 */
export function* generateDay(options: ScenarioOptions, date: string): Generator<Row> {
  validateOptions(options);
  const day = epochDay(date);
  const seed = options.seed | 0;
  const weekday = (((day + 4) % 7) + 7) % 7; // 1970-01-01 was a Thursday; 0 = Sunday
  const weekend = weekday === 0 || weekday === 6;
  const active = faultsOn(options, date);
  const dayIndexOf = (f: FaultPlan): number => day - epochDay(f.date);

  const dayRng = new Random(hashInts(seed, day, 0xda7));
  const listCount = Math.max(0, Math.round(options.listsPerDay * (weekend ? WEEKEND_TRAFFIC : WEEKDAY_TRAFFIC) * Math.exp(dayRng.normal(0, 0.04))));
  const intentWeights = (weekend ? WEEKEND_INTENT : WEEKDAY_INTENT).map((w) => w * Math.exp(dayRng.normal(0, 0.08)));
  // Lists are a full page (60 %) or a shorter page for a narrow query; mean = meanListSize.
  const page = Math.max(2, Math.round(options.meanListSize * 1.25));
  const fullShare = 0.6;
  const narrowMean = Math.max(0, (options.meanListSize - fullShare * page) / (1 - fullShare) - 2);
  const ymd = date.replaceAll('-', '');

  const truncation = active.find((f) => f.kind === 'list_truncation');
  const duplication = active.find((f) => f.kind === 'duplicate_items');
  const scrambling = active.find((f) => f.kind === 'order_scrambled');
  const valueFaults = active.filter((f) => !STRUCTURAL.has(f.kind));

  for (let l = 0; l < listCount; l++) {
    const r = new Random(hashInts(seed, day, l));
    const faultRng = new Random(hashInts(seed, day, l, 0xfa17));
    const intent = r.weighted(intentWeights);
    const queryLength = Math.min(12, 1 + r.poisson(weekend ? 1.45 : 1.3));
    const n = r.bernoulli(fullShare) ? page : Math.min(page - 1, 2 + r.poisson(narrowMean));

    const seen = new Set<number>();
    let candidates: Candidate[] = [];
    for (let k = 0; k < n; k++) {
      let id = 0;
      for (let attempt = 0; attempt < 20; attempt++) {
        const family = r.bernoulli(0.7) ? intent : r.weighted(intentWeights);
        // Popular items (low numbers) are retrieved far more often.
        id = family * CATALOG_PER_FAMILY + Math.floor(CATALOG_PER_FAMILY * r.uniform() ** 3);
        if (!seen.has(id)) break;
      }
      seen.add(id);
      const item = catalogItem(seed, id);
      candidates.push({
        item,
        relevance: r.normal(item.family === intent ? 0.3 : -0.6, 1),
        textNoise: r.normal(),
        semanticNoise: r.normal(),
        scoreNoise: r.normal(),
        clickDraw: r.uniform(),
        recentClicks: r.poisson(Math.exp(item.popularity)),
      });
    }

    // Structural faults act on retrieval, before the features are computed.
    if (truncation !== undefined) {
      candidates = candidates.slice(0, Math.max(2, Math.round(n * (truncation.amount ?? 0.5))));
    }
    if (duplication !== undefined && candidates.length >= 3 && faultRng.bernoulli(duplication.amount ?? 0.2)) {
      const j = 1 + faultRng.int(candidates.length - 1);
      const i = faultRng.int(j);
      candidates[j] = candidates[i];
    }

    const m = candidates.length;
    const textMatch = candidates.map((c) => Math.exp(0.9 + 0.12 * queryLength + 0.3 * c.relevance + 0.25 * c.textNoise));
    const semantic = candidates.map((c) => Math.tanh(0.15 + 0.22 * c.relevance + 0.18 * c.semanticNoise));
    const textNorm = minmax(textMatch);
    const priceZ = zscore(candidates.map((c) => Math.log(c.item.price)));
    const popRank = rankDescending(candidates.map((c) => c.recentClicks), candidates.map((c) => c.item.id));
    const share = shares(candidates.map((c) => c.recentClicks + 0.5));

    const score = candidates.map(
      (c, k) =>
        1.1 * textNorm[k] + 1.6 * semantic[k] + 0.4 * c.item.photoQuality + 0.15 * Math.log1p(c.item.reviewCount) + 2 * share[k] + 0.3 * c.scoreNoise,
    );
    let order = Array.from({ length: m }, (_, k) => k).sort((a, b) => score[b] - score[a] || a - b);
    // A fallback ranker serves the list in a random order; clicks follow what is shown.
    if (scrambling !== undefined && faultRng.bernoulli(scrambling.amount ?? 0.3)) order = permutation(order, faultRng);

    // Columns in position order.
    const cols: Record<string, Value[]> = {};
    for (const f of FEATURES) cols[f.name] = new Array<Value>(m);
    const itemIds = new Array<number>(m);
    const clicked = new Array<number>(m);
    const scores = new Array<number>(m);
    for (let p = 0; p < m; p++) {
      const k = order[p];
      const c = candidates[k];
      const it = c.item;
      itemIds[p] = it.id;
      scores[p] = round(score[k], 6);
      // Position bias: attention falls with the position, attraction rises with relevance.
      const pClick = sigmoid(-1.9 + 0.8 * c.relevance + 0.8 * (it.photoQuality - 0.7)) / (1 + p) ** 0.7;
      clicked[p] = c.clickDraw < pClick ? 1 : 0;
      cols.text_match[p] = textMatch[k];
      cols.text_match_norm[p] = textNorm[k];
      cols.semantic_similarity[p] = semantic[k];
      cols.price[p] = it.price;
      cols.price_z[p] = priceZ[k];
      cols.popularity_rank[p] = popRank[k];
      cols.click_share[p] = share[k];
      cols.review_count[p] = it.reviewCount;
      cols.seller_rating[p] = it.sellerRating;
      cols.listing_age_days[p] = round(((day + it.phase) % it.lifetime) + it.hour, 2);
      cols.photo_quality[p] = it.photoQuality;
      cols.query_length[p] = queryLength;
      cols.ships_free[p] = it.shipsFree;
      cols.plant_family[p] = CATEGORIES[it.family];
    }

    for (const f of valueFaults) {
      applyValueFault(f, cols[f.feature as string], {
        rng: faultRng,
        seed,
        itemIds,
        rawSource: f.kind === 'minmax_raw' ? order.map((k) => textMatch[k]) : undefined,
        daysIn: dayIndexOf(f),
      });
    }

    const listId = `imp_${ymd}_${String(l).padStart(5, '0')}`;
    for (let p = 0; p < m; p++) {
      const row: Row = {
        snapshot_date: date,
        list_id: listId,
        item_id: `itm-${String(itemIds[p]).padStart(6, '0')}`,
        position: p + 1,
        clicked: clicked[p],
        model_score: scores[p],
      };
      for (const name of FEATURE_NAMES) row[name] = cols[name][p];
      yield row;
    }
  }
}

const FEATURE_NAMES = FEATURES.map((f) => f.name);

interface FaultContext {
  rng: Random;
  seed: number;
  itemIds: number[];
  /** For minmax_raw: the unnormalised values, in position order. */
  rawSource: number[] | undefined;
  /** 0 on the fault's first day. */
  daysIn: number;
}

function applyValueFault(f: FaultPlan, v: Value[], ctx: FaultContext): void {
  const name = f.feature as string;
  const spec = FEATURE_BY_NAME.get(name) as FeatureSpec;
  const { rng } = ctx;
  const shift = (size: number): void => {
    const delta = size * (NOMINAL_SD[name] ?? 1);
    for (let i = 0; i < v.length; i++) if (typeof v[i] === 'number') v[i] = (v[i] as number) + delta;
  };
  switch (f.kind) {
    case 'mean_shift':
      if (spec.kind === 'binary') {
        for (let i = 0; i < v.length; i++) if (v[i] === 0 && rng.bernoulli(f.amount ?? 0.5)) v[i] = 1;
      } else shift(f.amount ?? 0.5);
      return;
    case 'creeping_drift':
      shift((f.amount ?? 0.05) * (ctx.daysIn + 1));
      return;
    case 'unit_change':
      for (let i = 0; i < v.length; i++) if (typeof v[i] === 'number') v[i] = (v[i] as number) * (f.amount ?? 100);
      return;
    case 'null_spike':
      for (let i = 0; i < v.length; i++) if (rng.bernoulli(f.amount ?? 0.2)) v[i] = null;
      return;
    case 'minmax_raw':
      for (let i = 0; i < v.length; i++) v[i] = (ctx.rawSource as number[])[i];
      return;
    case 'stuck_default': {
      const value: Value = spec.kind === 'categorical' ? 'unknown' : (f.amount ?? 0);
      v.fill(value);
      return;
    }
    case 'flat_within_lists': {
      // One item's value for the whole list: each list holds a draw from the usual marginal.
      v.fill(v[rng.int(v.length)]);
      return;
    }
    case 'new_category': {
      // By item, so an item is in the new category in every list it appears in.
      const share = f.amount ?? 0.3;
      for (let i = 0; i < v.length; i++) if (hashInts(ctx.seed, ctx.itemIds[i], hashString(NEW_CATEGORY)) / 4294967296 < share) v[i] = NEW_CATEGORY;
      return;
    }
    case 'nonfinite':
      for (let i = 0; i < v.length; i++) if (rng.bernoulli(f.amount ?? 0.01)) v[i] = [Number.NaN, Number.POSITIVE_INFINITY, Number.NEGATIVE_INFINITY][rng.int(3)];
      return;
    case 'overflow':
      for (let i = 0; i < v.length; i++) if (typeof v[i] === 'number' && rng.bernoulli(f.amount ?? 0.1)) v[i] = 1e308;
      return;
    case 'type_error':
      // A locale bug: the number written as text with a decimal comma.
      for (let i = 0; i < v.length; i++) {
        const x = v[i];
        if (typeof x === 'number' && rng.bernoulli(f.amount ?? 0.01)) v[i] = x.toFixed(2).replace('.', ',');
      }
      return;
    case 'polarity_flip': {
      // The k-th largest value goes to the item that had the k-th smallest: same values, reversed order.
      const idx = v.map((_, i) => i).filter((i) => typeof v[i] === 'number');
      const byValue = [...idx].sort((a, b) => (v[a] as number) - (v[b] as number) || a - b);
      const values = byValue.map((i) => v[i]);
      byValue.forEach((i, r) => (v[i] = values[values.length - 1 - r]!));
      return;
    }
    case 'shuffle_within_lists': {
      const idx = v.map((_, i) => i).filter((i) => typeof v[i] === 'number');
      const shuffled = permutation(idx.map((i) => v[i]), rng);
      idx.forEach((i, r) => (v[i] = shuffled[r]!));
      return;
    }
    case 'list_truncation':
    case 'duplicate_items':
    case 'order_scrambled':
      return;
  }
}

/** A uniformly random permutation (Fisher-Yates) of a copy of `x`. */
function permutation<T>(x: readonly T[], rng: Random): T[] {
  const out = [...x];
  for (let i = out.length - 1; i > 0; i--) {
    const j = rng.int(i + 1);
    [out[i], out[j]] = [out[j]!, out[i]!];
  }
  return out;
}

// ---------------------------------------------------------------- within-list transforms

/** (x - min) / (max - min); a list whose values are all equal gets zeros. */
function minmax(x: number[]): number[] {
  let lo = Infinity;
  let hi = -Infinity;
  for (const v of x) {
    if (v < lo) lo = v;
    if (v > hi) hi = v;
  }
  const span = hi - lo;
  return x.map((v) => (span > 0 ? (v - lo) / span : 0));
}

/** (x - mean) / population sd, two-pass; a list whose values are all equal gets zeros. */
function zscore(x: number[]): number[] {
  let mean = 0;
  for (const v of x) mean += v;
  mean /= x.length;
  let ss = 0;
  for (const v of x) ss += (v - mean) ** 2;
  const sd = Math.sqrt(ss / x.length);
  return x.map((v) => (sd > 0 ? (v - mean) / sd : 0));
}

/** 1 for the largest value; ties broken by `tieKey`, then by index, so ranks are 1..n. */
function rankDescending(x: number[], tieKey: number[]): number[] {
  const idx = x.map((_, i) => i).sort((a, b) => x[b] - x[a] || tieKey[a] - tieKey[b] || a - b);
  const rank = new Array<number>(x.length);
  idx.forEach((k, r) => {
    rank[k] = r + 1;
  });
  return rank;
}

function shares(x: number[]): number[] {
  let sum = 0;
  for (const v of x) sum += v;
  return x.map((v) => v / sum);
}

/** The numeric feature names, for callers that need them. */
export const NUMERIC_FEATURE_NAMES: readonly string[] = NUMERIC_FEATURES;
