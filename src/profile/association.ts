/**
 * Ranking aggregates of a day, in the stream engine's single pass: each list's rows in
 * served order, then per item-level numeric feature the Spearman correlation with the
 * position and with the model score inside each list, and the outcome of the served order
 * from labels. Pure: typed arrays in, mergeable sums out.
 */
import { NULL_POSITION, type AssociationCounts, type OutcomeCounts, type RankCorrelationSums, type ListGrouping, type RankArray, type ServedOrder } from './types.ts';
import { POSITION_BUCKET_UPPER, RankScratch, averageRanksInto, ndcgAtK, positionBucket, reciprocalRank, rhoFromRanks } from '../stats/index.ts';


const FLOAT32_EXACT_RANKS = 8388608;

function shared<T extends Float64Array | Float32Array | Int32Array | Uint8Array>(ctor: { new (b: SharedArrayBuffer): T; BYTES_PER_ELEMENT: number }, n: number): T {
  return new ctor(new SharedArrayBuffer(Math.max(1, n) * ctor.BYTES_PER_ELEMENT));
}

/** Average ranks of values already sorted ascending (a linear walk over the tie groups). */
function ranksOfSortedInto(sorted: ArrayLike<number>, from: number, n: number, out: RankArray, outFrom: number): void {
  let i = 0;
  while (i < n) {
    let j = i + 1;
    while (j < n && sorted[from + j] === sorted[from + i]) j++;
    const r = (i + 1 + j) / 2;
    for (let t = i; t < j; t++) out[outFrom + t] = r;
    i = j;
  }
}

/** Row offsets inside a list are packed below this (2^20) next to the position. */
const PACK = 1048576;

/**
 * The served order of every list: its rows with a non-null position sorted by position
 * (each list's rows are packed as (position - min) * 2^20 + index and sorted as doubles,
 * exact for int32 positions and lists under 2^20 rows; longer lists sort by comparison). O(rows log).
 */
export function servedOrder(position: Int32Array, g: ListGrouping, lists: number, score: Float64Array | null): ServedOrder {
  const start = shared(Int32Array, lists + 1);
  let total = 0;
  for (let l = 0; l < lists; l++) {
    start[l] = total;
    for (let k = g.start[l]!; k < g.start[l + 1]!; k++) if (position[g.order[k]!] !== NULL_POSITION) total++;
  }
  start[lists] = total;
  const rows = shared(Int32Array, total);
  const ranks = (): RankArray => (total < FLOAT32_EXACT_RANKS ? shared(Float32Array, total) : shared(Float64Array, total));
  const positionRank = ranks();
  const sc = score === null ? null : shared(Float64Array, total);
  const scoreRank = score === null ? null : ranks();
  const scoreComplete = score === null ? null : shared(Uint8Array, lists);
  let keys = new Float64Array(64);
  let pos = new Int32Array(64);
  const scratch = new RankScratch();
  for (let l = 0; l < lists; l++) {
    const a = g.start[l]!;
    const b = g.start[l + 1]!;
    const e0 = start[l]!;
    const n = start[l + 1]! - e0;
    if (n === 0) continue;
    if (keys.length < n) {
      keys = new Float64Array(n * 2);
      pos = new Int32Array(n * 2);
    }
    let min = Infinity;
    for (let k = a; k < b; k++) {
      const p = position[g.order[k]!]!;
      if (p !== NULL_POSITION && p < min) min = p;
    }
    let m = 0;
    if (b - a >= PACK) {
      // A list of a million rows or more: sort its row offsets by position the slow way.
      const offsets = Array.from({ length: b - a }, (_, k) => k).filter((k) => position[g.order[a + k]!] !== NULL_POSITION);
      offsets.sort((x, y) => position[g.order[a + x]!]! - position[g.order[a + y]!]! || x - y);
      offsets.forEach((k, t) => (keys[t] = k));
    } else {
      for (let k = a; k < b; k++) {
        const p = position[g.order[k]!]!;
        if (p !== NULL_POSITION) keys[m++] = (p - min) * PACK + (k - a);
      }
      keys.subarray(0, n).sort();
    }
    for (let t = 0; t < n; t++) {
      const k = a + (b - a >= PACK ? keys[t]! : keys[t]! % PACK);
      const r = g.order[k]!;
      rows[e0 + t] = r;
      pos[t] = position[r]!;
    }
    ranksOfSortedInto(pos, 0, n, positionRank, e0);
    if (score !== null) {
      let complete = 1;
      for (let t = 0; t < n; t++) {
        const s = score[rows[e0 + t]!]!;
        sc![e0 + t] = s;
        if (!Number.isFinite(s)) complete = 0;
      }
      scoreComplete![l] = complete;
      if (complete === 1) {
        scratch.ensure(n);
        averageRanksInto(sc!.subarray(e0, e0 + n), n, scratch, scratch.rx);
        scoreRank!.set(scratch.rx.subarray(0, n), e0);
      }
    }
  }
  return { start, rows, positionRank, score: sc, scoreRank, scoreComplete };
}

export function emptyCorrelationSums(): RankCorrelationSums {
  return { count: 0, sum: 0, sumSq: 0, positive: 0, negative: 0 };
}

function addRho(s: RankCorrelationSums, rho: number | null): void {
  if (rho === null) return;
  s.count++;
  s.sum += rho;
  s.sumSq += rho * rho;
  if (rho > 0) s.positive++;
  else if (rho < 0) s.negative++;
}

export function mergeCorrelationSums(a: RankCorrelationSums, b: RankCorrelationSums): RankCorrelationSums {
  return { count: a.count + b.count, sum: a.sum + b.sum, sumSq: a.sumSq + b.sumSq, positive: a.positive + b.positive, negative: a.negative + b.negative };
}

/** Reusable buffers of featureAssociation. */
class PairScratch {
  x = new Float64Array(64);
  y = new Float64Array(64);
  /** The ordering buffers and the rank outputs (ranks.rx, ranks.ry). */
  ranks = new RankScratch();
  ensure(n: number): void {
    this.ranks.ensure(n);
    if (this.x.length >= n) return;
    const len = Math.max(n, this.x.length * 2);
    this.x = new Float64Array(len);
    this.y = new Float64Array(len);
  }
}

/**
 * Per-list Spearman correlations of one feature with the position and (unless it is the
 * score itself) with the score, summed over the lists. A list counts when it has at least 3
 * pairs with both values finite and both sides vary (rho is undefined otherwise). Ranks are
 * taken among the complete pairs only, as SciPy's spearmanr does after dropping missing pairs.
 */
export function featureAssociation(values: Float64Array, served: ServedOrder, withScore: boolean, record?: { position: Float64Array; score: Float64Array | null }): AssociationCounts {
  const position = emptyCorrelationSums();
  const score = withScore && served.score !== null ? emptyCorrelationSums() : null;
  // Each list's rho, when recorded (NaN: the list did not count).
  const recPosition = record?.position.fill(Number.NaN);
  const recScore = score === null ? undefined : record?.score?.fill(Number.NaN);
  const sp = new PairScratch();
  const lists = served.start.length - 1;
  for (let l = 0; l < lists; l++) {
    const e0 = served.start[l]!;
    const n = served.start[l + 1]! - e0;
    if (n < 3) continue;
    sp.ensure(n);
    // Feature values in served order, with their position ranks among the complete pairs.
    let m = 0;
    for (let t = 0; t < n; t++) {
      const x = values[served.rows[e0 + t]!]!;
      if (Number.isFinite(x)) {
        sp.x[m] = x;
        // The position's rank in the list orders and ties the pairs as the position does.
        sp.y[m] = served.positionRank[e0 + t]!;
        m++;
      }
    }
    if (m < 3) continue;
    averageRanksInto(sp.x, m, sp.ranks, sp.ranks.rx);
    let rhoPosition: number | null;
    if (m === n) rhoPosition = rhoFromRanks(sp.ranks.rx, served.positionRank, n, e0);
    else {
      ranksOfSortedInto(sp.y, 0, m, sp.ranks.ry, 0);
      rhoPosition = rhoFromRanks(sp.ranks.rx, sp.ranks.ry, m);
    }
    addRho(position, rhoPosition);
    if (recPosition !== undefined && rhoPosition !== null) recPosition[l] = rhoPosition;
    if (score === null) continue;
    const s = served.score!;
    if (m === n && served.scoreComplete![l] === 1) {
      const rho = rhoFromRanks(sp.ranks.rx, served.scoreRank!, n, e0);
      addRho(score, rho);
      if (recScore !== undefined && rho !== null) recScore[l] = rho;
      continue;
    }
    let q = 0;
    for (let t = 0; t < n; t++) {
      const x = values[served.rows[e0 + t]!]!;
      const y = s[e0 + t]!;
      if (Number.isFinite(x) && Number.isFinite(y)) {
        sp.x[q] = x;
        sp.y[q] = y;
        q++;
      }
    }
    if (q < 3) continue;
    averageRanksInto(sp.x, q, sp.ranks, sp.ranks.rx);
    averageRanksInto(sp.y, q, sp.ranks, sp.ranks.ry);
    const rho = rhoFromRanks(sp.ranks.rx, sp.ranks.ry, q);
    addRho(score, rho);
    if (recScore !== undefined && rho !== null) recScore[l] = rho;
  }
  return { position, score };
}

/**
 * The association sums of the lists marked in `member` (index = list), from recorded per-list
 * rhos, added in list order as featureAssociation adds them (so the sums are the same bits).
 */
export function correlationSumsOfLists(rhos: Float64Array, member: Uint8Array): RankCorrelationSums {
  const sums = emptyCorrelationSums();
  for (let l = 0; l < rhos.length; l++) {
    const rho = rhos[l]!;
    if (member[l] === 1 && !Number.isNaN(rho)) addRho(sums, rho);
  }
  return sums;
}

/**
 * Outcome of the served order from labels: per list with at least one positive label
 * (label > 0) and a position, the reciprocal rank of the first positive (rows tied on
 * position share the better rank, rank() in SQL) and NDCG@k (linear gain, 1 / log2(1 + rank)
 * discount, rows tied on position at their average rank); positives counted per bucket of
 * served rank (rank()). Lists without a positive are not included
 * (they are the no-positive ratio of the dataset counts).
 */
export function outcomeCounts(label: Float64Array, served: ServedOrder, k: number): OutcomeCounts {
  const out: OutcomeCounts = {
    k,
    lists: 0,
    reciprocalRank: { count: 0, sum: 0, sumSq: 0 },
    ndcg: { count: 0, sum: 0, sumSq: 0 },
    positivesByBucket: new Array<number>(POSITION_BUCKET_UPPER.length).fill(0),
  };
  let ys = new Float64Array(64);
  let scratch = new Float64Array(64);
  let servedRank = new Int32Array(64);
  const lists = served.start.length - 1;
  for (let l = 0; l < lists; l++) {
    const e0 = served.start[l]!;
    const n = served.start[l + 1]! - e0;
    if (n === 0) continue;
    if (ys.length < n) {
      ys = new Float64Array(n * 2);
      scratch = new Float64Array(n * 2);
      servedRank = new Int32Array(n * 2);
    }
    let positives = 0;
    let rank = 1;
    for (let t = 0; t < n; t++) {
      // Served rank: 1 + the entries of the list with a smaller position (rank() in SQL).
      if (t > 0 && served.positionRank[e0 + t] !== served.positionRank[e0 + t - 1]) rank = t + 1;
      servedRank[t] = rank;
      const y = label[served.rows[e0 + t]!]!;
      ys[t] = y;
      if (y > 0) {
        positives++;
        out.positivesByBucket[positionBucket(rank)]!++;
      }
    }
    if (positives === 0) continue;
    const labels = ys.subarray(0, n);
    const rr = reciprocalRank(labels, servedRank.subarray(0, n))!;
    // Rows tied on position take their average rank (NDCG then stays <= 1).
    const nd = ndcgAtK(labels, k, served.positionRank.subarray(e0, e0 + n), scratch)!;
    out.lists++;
    out.reciprocalRank.count++;
    out.reciprocalRank.sum += rr;
    out.reciprocalRank.sumSq += rr * rr;
    out.ndcg.count++;
    out.ndcg.sum += nd;
    out.ndcg.sumSq += nd * nd;
  }
  return out;
}

export function mergeOutcomeCounts(a: OutcomeCounts, b: OutcomeCounts): OutcomeCounts {
  const sums = (x: OutcomeCounts['ndcg'], y: OutcomeCounts['ndcg']): OutcomeCounts['ndcg'] => ({ count: x.count + y.count, sum: x.sum + y.sum, sumSq: x.sumSq + y.sumSq });
  return {
    k: a.k,
    lists: a.lists + b.lists,
    reciprocalRank: sums(a.reciprocalRank, b.reciprocalRank),
    ndcg: sums(a.ndcg, b.ndcg),
    positivesByBucket: a.positivesByBucket.map((c, i) => c + (b.positivesByBucket[i] ?? 0)),
  };
}
