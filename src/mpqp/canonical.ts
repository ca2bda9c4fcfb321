/**
 * The canonical form of a partition: what makes a table independent of how the exploration was
 * run (one thread or many, one machine or k parts, stopped and resumed).
 *
 * A region is a function of its active set alone (`buildRegion` over the whole box, with the
 * active set sorted), so two explorations that found the same set of active sets hold the same
 * regions, bit for bit. What differs is their order and numbering. The canonical form sorts the
 * regions by active set (the sorted index list, compared entry by entry, a shorter prefix first),
 * renumbers them, and lists each facet's neighbours in ascending new index, the union of the
 * neighbours computed again from the regions alone.
 *
 * Thin regions: the exploration counts a neighbour within 10·tol.radius of a facet as covering it,
 * so whether it meets a region thinner than that depends on where it lands (threads and parts land
 * elsewhere). A complete union is therefore closed under the combinatorial neighbour of every
 * facet (`closeUnderGuesses`): a thin region is the row-added or row-dropped neighbour of a region
 * every run found, so every run ends with it. Leaving thin regions out instead opened holes that
 * `gaps` found by its facet probes. `stats.thinRegions` counts them.
 *
 * Alternative tilings: at a degenerate point several active sets (one row swapped for a row that
 * depends on the others and is tight all over the region) give overlapping full-dimensional regions
 * of the same optimiser, and which of them an exploration holds depends on where it landed. The
 * closure also takes those swaps (`swapGuesses`), so every run ends with all of them.
 */
import { splitBox } from './split.js';
import type { CriticalRegion, ExplorationWork, MpqpProblem, NeighbourWork, Partition, PartitionStats } from './types.js';
import { sumCauses, witnessesOf } from './types.js';
import type { LpEngine } from './region.js';
import { overlapsFacet, parseWitnessKey, slicePolytope, uncoveredFacetPiece } from './solve.js';
import { boundingBoxByLp, GridLocator } from '../table/locator.js';
import { buildRegion } from './region.js';
import { qpWorkspace, rowNonzeros } from './pointqp.js';
import { choleskyInPlace } from '../linalg/dense.js';
import { tol } from '../tol.js';
import { sortedOrder } from '../util/order.js';
import { findFeasiblePoint } from '../lp/kernel.js';
import { FacetPairs, zeroPairCounts, addPairCounts } from './facet-pairs.js';

/** A copy of `a` in an array twice as long (a growing id list). */
function doubled(a: Int32Array<ArrayBuffer>): Int32Array<ArrayBuffer> {
  const g = new Int32Array(2 * a.length);
  g.set(a);
  return g;
}

/** Order of two ascending index lists: entry by entry, then the shorter first. */
export function compareActiveSets(a: readonly number[], b: readonly number[]): number {
  const n = Math.min(a.length, b.length);
  for (let i = 0; i < n; i++) if (a[i] !== b[i]) return a[i] - b[i];
  return a.length - b.length;
}

/**
 * The share of a time limit kept for the canonical form: a bounded solve explores for the rest and
 * then puts the regions in canonical form within the same limit (its neighbours step costs up to
 * about a quarter of the exploration's time on the 5-D fixture, on one thread; see DEVELOPERS.md).
 */
export const canonicalReserve = 0.25;

/** Options of `joinPartitions`: a stop for its closure and neighbours steps, and progress. */
export interface JoinOptions {
  /**
   * asked between regions of the closure step and between clusters of facets of the neighbours
   * step: true ends the step early, and the result is marked incomplete ('time-limit'; the
   * neighbour lists of the clusters not done stay empty, `stats.neighboursCut`)
   */
  shouldStop?: () => boolean;
  /** called at most every 100 ms: which step, how far it is, out of how much */
  onProgress?: (step: 'closing' | 'neighbours', done: number, total: number) => void;
  /**
   * guesses of the closure step already built elsewhere (`buildGuesses`, e.g. by the exploration's
   * warm workers): a key found here is not built again. Hints only: the closure's decisions, and so
   * the result, are the same with or without them (a region is a function of its active set).
   */
  guesses?: GuessHints;
  /** the neighbours step's `NeighbourOptions.twinsFrom` (default `TWINS_FROM`; for tests) */
  twinsFrom?: number;
}

/**
 * Closure guesses built ahead (`buildGuesses`): every key tried, and the thin regions among them
 * (full-dimensional, Chebyshev radius ≤ 10·tol.radius: the only ones its guesses across facets may add). A key
 * tried and not in `thin` gave no region those guesses could add; a swap at a degenerate point (`swapGuesses`)
 * builds its own, whatever its size. `lean`: built lean (no move
 * sequence), as the regions of the partition must be for the hints to apply.
 */
export interface GuessHints {
  lean: boolean;
  tried: Set<string>;
  thin: Map<string, { region: Omit<CriticalRegion, 'id'>; box: { lo: number[]; hi: number[] } }>;
  /** the keys tried whose active set failed LICQ (the closure then seeks the other bases, `swapGuesses`) */
  licq?: Set<string>;
  /** twin facet pairs found ahead (`twinPairs`): keys of the two regions and the two facets, per pair (for the neighbours step, `NeighbourOptions.twinHints`) */
  twins?: { keys: string[]; facets: number[] };
}

/** The closure's guess across facet `f` of a region of active set `activeSet` (row added across a primal facet, dropped across a dual one); null for a box facet. */
function guessAcross(activeSet: readonly number[], f: { kind: string; row: number }): number[] | null {
  if (f.kind === 'box') return null;
  return f.kind === 'primal' ? [...activeSet, f.row].sort((x, y) => x - y) : activeSet.filter((i) => i !== f.row);
}

/**
 * Build ahead the closure's guesses across the facets of `regions` (those whose keys are not
 * among the regions themselves), for `JoinOptions.guesses`: a worker that explored them has the
 * region code warm, where the thread doing the canonical form would compile it again. The builds
 * are the closure's own (`buildRegion` of the sorted active set, kernel LPs, lean as given), so
 * every bit is what the closure would get. `shouldStop` ends it early (the keys not reached are
 * simply not hinted). `lp` counts the LPs.
 */
export function buildGuesses(problem: MpqpProblem, regions: readonly Pick<CriticalRegion, 'activeSet' | 'facets'>[], lean: boolean, lp: LpEngine, shouldStop?: () => boolean): { lean: boolean; tried: string[]; licq: string[]; thin: { key: string; region: Omit<CriticalRegion, 'id'>; box: { lo: number[]; hi: number[] } }[] } {
  const own = new Set<string>();
  for (const R of regions) own.add(R.activeSet.join(','));
  const seen = new Set<string>();
  const tried: string[] = [];
  const licq: string[] = [];
  const thin: { key: string; region: Omit<CriticalRegion, 'id'>; box: { lo: number[]; hi: number[] } }[] = [];
  for (const R of regions) {
    if (shouldStop?.()) break;
    for (const f of R.facets) {
      const guess = guessAcross(R.activeSet, f);
      if (!guess) continue;
      const key = guess.join(',');
      if (own.has(key) || seen.has(key)) continue;
      seen.add(key);
      const res = buildRegion(problem, guess, lp, lean);
      tried.push(key);
      if (!res.ok && res.reason === 'licq') licq.push(key);
      if (res.ok && res.region.chebyshev.radius <= 10 * tol.radius) thin.push({ key, region: res.region, box: { lo: Array.from(res.bbox.lo), hi: Array.from(res.bbox.hi) } });
    }
  }
  return { lean, tried, licq, thin };
}

/**
 * Put partitions of the same mpQP together in canonical form: the union of their regions (a region
 * found by several parts is kept once), sorted by active set, renumbered, and the neighbours of
 * every facet computed again from the regions alone (`canonicalNeighbours`), so that they do not
 * depend on the order the exploration happened to cross facets in. One partition in gives its
 * canonical form. Counters are summed; `complete` only when every part is complete (`stopReason`
 * the first part's that is not 'done'). The inputs are not modified; the result's regions are new
 * objects sharing the numeric arrays.
 */
export function joinPartitions(problem: MpqpProblem, parts: readonly Partition[], options: JoinOptions = {}): Partition {
  const join = beginJoin(problem, parts, options);
  const counts = zeroNeighbourCounts();
  const lists = canonicalNeighbours(problem, join.regions, join.boxes, join.lp, join.progress, undefined, { shouldStop: join.shouldStop, counts, twinHints: join.twinHints, twinsFrom: options.twinsFrom });
  return join.finish(lists, counts);
}

/** How the neighbours step went: its pair tests and how each was decided, its clusters of facets (of this share) and those done, and whether `shouldStop` cut it. */
export type NeighbourCounts = NeighbourWork;

/** Zero counters, not cut. */
export function zeroNeighbourCounts(): NeighbourCounts {
  return { ...zeroPairCounts(), clusters: 0, clustersDone: 0, twins: 0, cut: false };
}

/** Add the counters of `b` (a share) into `a`; cut when either is. */
export function addNeighbourCounts(a: NeighbourCounts, b: NeighbourCounts): void {
  addPairCounts(a, b);
  a.clusters += b.clusters;
  a.clustersDone += b.clustersDone;
  a.twins += b.twins;
  a.cut = a.cut || b.cut;
}

/** Options of `canonicalNeighbours`: a stop, and counters. */
export interface NeighbourOptions {
  /** asked between clusters of facets: true ends the step (the clusters not done keep empty lists, `counts.cut`) */
  shouldStop?: () => boolean;
  /** counters added to (pair tests, LP-free decisions, LPs, clusters, cut) */
  counts?: NeighbourCounts;
  /** false: every pair test by its LP; true: LP-free decisions whatever the pairs per region (for measurement and tests; the lists are the same); default: by the pairs per region */
  certificates?: boolean;
  /** clusters of at least this many facets seek twin facets first (default `TWINS_FROM`; Infinity: never) */
  twinsFrom?: number;
  /**
   * twin pairs found ahead (`twinPairs`, e.g. by the exploration's warm workers over their own
   * regions), as quadruples (region, facet, region, facet) of `regions`: in a cluster that seeks
   * twins, a hinted pair is paired without building the two regions' vertex lists. Hints only:
   * the pairs are those the search here would find (the same vertex lists from the same rows and
   * boxes), and a hinted pair still passes the pair's checks and test.
   */
  twinHints?: Int32Array;
  /** only seek the twins (clusters of at least `twinsFrom` facets) and push each pair found to `twinsOut` as (region, facet, region, facet); the lists returned are empty */
  twinsOut?: number[];
}

/**
 * Clusters of facets from this size on seek twin facets before their sweep (`canonicalNeighbours`).
 * Measured (neighbours step in one process, the finished tables' regions): mixer-5d-n10, 60 693
 * regions, clusters of 66–9 504 facets, 84.8 s → 10.3 s from 65 facets on, the same from 512 or
 * 1 024 on; boom-4d-n20, clusters of 159–385 facets with few twins, 0.94–1.01 s without →
 * 1.21–1.22 s from 65 on (the vertex lists of those clusters' regions, for 920 fewer pair tests).
 * The sweep's pair tests per facet, which the twins save: 53–73 in the mixer's clusters of 516–840
 * facets at 4 000 regions, 5–6.5 in the 25-channel bank's (232–1 212 facets), 0–0.7 in
 * boom-4d-n20's (its candidate checks drop the rest before a test).
 */
export const TWINS_FROM = 512;

/** A join whose neighbours are still to be computed (`beginJoin`), e.g. in shares on several threads. */
export interface PendingJoin {
  /** the union, closed, in canonical order (ids not yet set), and a box holding each region */
  regions: CriticalRegion[];
  boxes: { lo: ArrayLike<number>; hi: ArrayLike<number> }[];
  /** counts the LPs of the join */
  lp: LpEngine;
  /** progress of the neighbours step (JoinOptions.onProgress, at most every 100 ms) */
  progress: (step: 'neighbours', done: number, total: number) => void;
  /** the stop of the neighbours step (JoinOptions.shouldStop) */
  shouldStop?: () => boolean;
  /** the twin pairs hinted (`GuessHints.twins`) as indices of `regions`, for `NeighbourOptions.twinHints` */
  twinHints?: Int32Array;
  /**
   * The canonical partition, given `canonicalNeighbours` of `regions` (or the merge of its
   * shares) and its counters: a cut step marks it incomplete ('time-limit', `stats.neighboursCut`).
   */
  finish(neighbours: number[][][], counts?: NeighbourCounts): Partition;
}

/** `joinPartitions` up to the neighbours: union, closure, canonical order, boxes. */
export function beginJoin(problem: MpqpProblem, parts: readonly Partition[], options: JoinOptions = {}): PendingJoin {
  const byKey = new Map<string, { region: CriticalRegion; box: { lo: ArrayLike<number>; hi: ArrayLike<number> } | null }>();
  for (const part of parts)
    part.regions.forEach((R, i) => {
      const key = R.activeSet.join(',');
      if (!byKey.has(key)) byKey.set(key, { region: R, box: part.boxes?.[i] ?? null });
    });
  const lp: LpEngine = { lps: 0, reference: false };
  let closed = 0;
  let cut = false;
  let shownAt = 0;
  const progress = (step: 'closing' | 'neighbours', done: number, total: number): void => {
    if (!options.onProgress) return;
    const now = performance.now();
    if (now - shownAt < 100) return;
    shownAt = now;
    options.onProgress(step, done, total);
  };
  if (parts.every((p) => p.stats.complete)) ({ added: closed, cut } = closeUnderGuesses(problem, byKey, lp, options.shouldStop, progress, options.guesses));
  const entries = [...byKey.values()].sort((x, y) => compareActiveSets(x.region.activeSet, y.region.activeSet));
  const boxes = entries.map((e) => {
    if (e.box) return e.box;
    lp.lps += 2 * problem.ntheta;
    return boundingBoxByLp(e.region.A, e.region.b, e.region.chebyshev.center, tol.redundancy);
  });
  const sorted = entries.map((e) => e.region);
  // the hinted twins, by key to the union's indices (a pair whose key is not in the union is dropped)
  let twinHints: Int32Array | undefined;
  const tw = options.guesses?.twins;
  if (tw && tw.keys.length > 0) {
    const index = new Map<string, number>();
    sorted.forEach((R, i) => index.set(R.activeSet.join(','), i));
    const h: number[] = [];
    for (let t = 0; t + 1 < tw.keys.length; t += 2) {
      const r = index.get(tw.keys[t]);
      const s = index.get(tw.keys[t + 1]);
      if (r !== undefined && s !== undefined) h.push(r, tw.facets[t], s, tw.facets[t + 1]);
    }
    twinHints = Int32Array.from(h);
  }
  return { regions: sorted, boxes, lp, progress, shouldStop: options.shouldStop, twinHints, finish: (neighbours, counts) => finishJoin(problem, parts, sorted, boxes, neighbours, lp, closed, cut, counts) };
}

/**
 * The facets of `gaveUpAt` (witness keys of the runs joined) with a piece no region of the final
 * partition covers (`uncoveredFacetPiece`): the table's `unresolvedPieces`. Each facet is tested
 * whole, against every final region reaching its plane, so the answer depends on the partition and
 * the facet only, not on where or how often a run gave up on it; a facet whose region is not in the
 * partition (a bounded run's cut list) counts as unresolved; a facet whose uncovered piece has the
 * MPC infeasible just across it (`infeasibleAcross`) lies on the feasible set's boundary and does
 * not. A run that covered the facet without giving up lists it nowhere; one that gave up next to a
 * hole lists it, as every run must there. A facet whose test passes its bound of LPs
 * (`uncoveredFacetPiece`: 'undecided') counts as unresolved: it is not proven covered.
 */
export function recheckGiveUps(problem: MpqpProblem, regions: readonly CriticalRegion[], boxes: readonly { lo: ArrayLike<number>; hi: ArrayLike<number> }[], gaveUpAt: readonly string[], lp: LpEngine): number {
  if (gaveUpAt.length === 0) return 0;
  const byKey = new Map<string, number>();
  regions.forEach((R, i) => byKey.set(R.activeSet.join(','), i));
  let scale = 0;
  for (let j = 0; j < problem.ntheta; j++) scale = Math.max(scale, problem.box.upper[j] - problem.box.lower[j]);
  let open = 0;
  for (const w of gaveUpAt) {
    const at = parseWitnessKey(w);
    const id = at ? byKey.get(at.key) : undefined;
    if (!at || id === undefined || at.facet >= regions[id].A.length) {
      open++;
      continue;
    }
    const piece = uncoveredFacetPiece(regions, boxes, id, at.facet, scale, lp);
    if (piece === 'undecided') {
      open++;
      continue;
    }
    if (piece && !infeasibleAcross(problem, regions[id].A[at.facet], piece.theta, scale, lp)) open++;
  }
  return open;
}

/**
 * The MPC is infeasible just across the facet's plane at θ (on the facet), at the exploration's
 * nominal landing step and at 10·tol.inside (phase-1 LPs in z, counted): the facet lies on the
 * boundary of the feasible parameter set, which no region need cover (the exploration's own test
 * of a boundary facet: two steps, both infeasible).
 */
function infeasibleAcross(problem: MpqpProblem, a: readonly number[], theta: ArrayLike<number>, scale: number, lp: LpEngine): boolean {
  const { nz, nc, ntheta: nt } = problem;
  for (const h of [Math.max(tol.facetStep * scale, 100 * tol.inside), 10 * tol.inside]) {
    const b = Float64Array.from(problem.w);
    for (let i = 0; i < nc; i++) for (let j = 0; j < nt; j++) b[i] += problem.E[i * nt + j] * (theta[j] + h * a[j]);
    lp.lps++;
    if (findFeasiblePoint(problem.G, b, nc, nz) !== null) return false;
  }
  return true;
}

function finishJoin(
  problem: MpqpProblem,
  parts: readonly Partition[],
  sorted: readonly CriticalRegion[],
  boxes: { lo: ArrayLike<number>; hi: ArrayLike<number> }[],
  neighbours: number[][][],
  lp: LpEngine,
  closed: number,
  cut: boolean,
  counts?: NeighbourCounts,
): Partition {
  const regions: CriticalRegion[] = sorted.map((R, id) => ({
    ...R,
    id,
    facets: R.facets.map((f, q) => ({ kind: f.kind, row: f.row, neighbours: neighbours[id][q] })),
  }));
  const stats: PartitionStats = { regions: regions.length, candidates: 0, lps: lp.lps, qps: 0, complete: true, stopReason: 'done', unresolvedPieces: 0, thinRegions: regions.filter((R) => R.chebyshev.radius <= 10 * tol.radius).length };
  const work: ExplorationWork = { guesses: 0, guessHits: 0, seededSlices: 0, landings: 0, regionLps: 0, coverLps: 0 };
  let giveUps = 0;
  const gaveUpAt = new Set<string>();
  for (const p of parts) {
    stats.candidates += p.stats.candidates;
    stats.lps += p.stats.lps;
    stats.qps += p.stats.qps;
    // a part's own count: a canonical one's exploration total, an exploration's give-ups
    giveUps += p.stats.giveUps ?? p.stats.unresolvedPieces;
    for (const w of witnessesOf(p.stats)) gaveUpAt.add(w);
    stats.causes = sumCauses(stats.causes, p.stats.causes);
    if (!p.stats.complete && stats.complete) {
      stats.complete = false;
      stats.stopReason = p.stats.stopReason;
    }
    if (p.work) for (const k of Object.keys(work) as (keyof ExplorationWork)[]) work[k] += p.work[k];
  }
  stats.candidates += closed;
  // the give-ups re-checked against the final regions: what the table stores (see `recheckGiveUps`)
  stats.gaveUpAt = [...gaveUpAt].sort();
  stats.giveUps = giveUps;
  const lp0 = lp.lps;
  stats.unresolvedPieces = recheckGiveUps(problem, regions, boxes, stats.gaveUpAt, lp);
  stats.lps += lp.lps - lp0;
  if (cut && stats.complete) {
    // the closure was cut short: thin regions it would have added may be missing
    stats.complete = false;
    stats.stopReason = 'time-limit';
  }
  if (counts?.cut) {
    // the neighbours step was cut short: facets of the clusters not done have no neighbours listed
    stats.neighboursCut = true;
    if (stats.complete) {
      stats.complete = false;
      stats.stopReason = 'time-limit';
    }
  }
  return { regions, stats, work, boxes, neighbourWork: counts };
}

/**
 * Close a complete set of regions under the combinatorial neighbour of every non-box facet (the row
 * added across a primal facet, dropped across a dual one): a guess that is not known yet, gives a
 * full-dimensional region of Chebyshev radius ≤ 10·tol.radius and whose centre lies in no known
 * region is added, and its facets are tried in turn. The explorations are complete up to regions thinner than the covering
 * slack (10·tol.radius), and whether they meet those depends on where they land; such a region is
 * the combinatorial neighbour of one they all found, so after closing, every run holds it. A region
 * with a facet whose guess fails LICQ (a degenerate point) also gets its swaps (`swapGuesses`): each
 * that builds a full-dimensional region is added, whatever its size and overlap. Visits regions in
 * key order, so the result depends only on the set it starts from. Returns how many regions were
 * added, and whether `shouldStop` cut the closure short.
 */
function closeUnderGuesses(
  problem: MpqpProblem,
  byKey: Map<string, { region: CriticalRegion; box: { lo: ArrayLike<number>; hi: ArrayLike<number> } | null }>,
  lp: LpEngine,
  shouldStop?: () => boolean,
  progress?: (step: 'closing', done: number, total: number) => void,
  hints?: GuessHints,
): { added: number; cut: boolean } {
  // the entries in the order queued (their boxes for the index below: no key to join and look up per region)
  const entries = [...byKey.values()].sort((x, y) => compareActiveSets(x.region.activeSet, y.region.activeSet));
  const queue = entries.map((e) => e.region);
  const boxOf = (e: { region: CriticalRegion; box: { lo: ArrayLike<number>; hi: ArrayLike<number> } | null }) => {
    if (!e.box) {
      lp.lps += 2 * problem.ntheta;
      e.box = boundingBoxByLp(e.region.A, e.region.b, e.region.chebyshev.center, tol.redundancy);
    }
    return e.box;
  };
  // the index of the regions is only asked where a guess is thin (rare: most unions have none), so
  // it is built then, with the regions known at that point in the order they were queued: the same
  // index, and the same answers, as one built up front (which cost 0.2–0.5 s of the serial tail).
  // Few look-ups (boom-4d-n20: 32 among 18 931 regions), so each region goes into one cell of its
  // level (`cellBudget` 1): a quick build, slower look-ups, the same answers (the locator's rule does
  // not depend on the cells). The 18 767 regions of boom-4d-n20 and its 164 thin centres, one thread:
  // build 387–404 ms, look-ups 3–24 ms with the default budget (4^nθ); 40–42 ms and 36–39 ms with 1
  let grid: GridLocator | null = null;
  const index = (): GridLocator => {
    if (grid) return grid;
    grid = new GridLocator(problem.box.lower, problem.box.upper, { cellBudget: 1 });
    for (const e of entries) {
      const bb = boxOf(e);
      grid.add(e.region.A, e.region.b, bb.lo, bb.hi);
    }
    return grid;
  };
  const tried = new Set<string>();
  let added = 0;
  const lean = queue.length > 0 && queue[0].moves === undefined; // lean regions (no move sequence) stay lean
  const pre = hints && hints.lean === lean ? hints : null;
  /** keys whose guess failed LICQ (here or in the hints): the region guessing it sits at a degenerate point */
  const licqFailed = new Set<string>(pre?.licq ?? []);
  /** keys built here that gave no region; regions built and passed over by the rule for thin ones; keys tried as swaps */
  const failed = new Set<string>();
  const passed = new Map<string, { region: Omit<CriticalRegion, 'id'>; box: { lo: ArrayLike<number>; hi: ArrayLike<number> } }>();
  const swapped = new Set<string>();
  const push = (key: string, built: { region: Omit<CriticalRegion, 'id'>; box: { lo: ArrayLike<number>; hi: ArrayLike<number> } }): void => {
    const region: CriticalRegion = { id: -1, ...built.region };
    const entry = { region, box: built.box };
    byKey.set(key, entry);
    entries.push(entry);
    queue.push(region);
    if (grid) grid.add(region.A, region.b, built.box.lo, built.box.hi);
    added++;
  };
  for (let q = 0; q < queue.length; q++) {
    if (shouldStop?.()) return { added, cut: true };
    progress?.('closing', q, queue.length);
    const R = queue[q];
    let degenerate = false;
    for (const f of R.facets) {
      if (f.kind === 'box') continue;
      const guess = guessAcross(R.activeSet, f);
      if (!guess) continue;
      const key = guess.join(',');
      if (byKey.has(key)) continue;
      if (tried.has(key)) {
        if (licqFailed.has(key)) degenerate = true;
        continue;
      }
      tried.add(key);
      // built ahead (a hint): the same bits as building it here
      let built: { region: Omit<CriticalRegion, 'id'>; box: { lo: ArrayLike<number>; hi: ArrayLike<number> } } | undefined;
      if (pre?.tried.has(key)) {
        if (licqFailed.has(key)) degenerate = true;
        built = pre.thin.get(key);
        if (!built) continue;
      } else {
        const res = buildRegion(problem, guess, lp, lean);
        if (!res.ok) {
          failed.add(key);
          if (res.reason === 'licq') {
            licqFailed.add(key);
            degenerate = true;
          }
          continue;
        }
        built = { region: res.region, box: res.bbox };
        // only what the explorations may miss: a thin region whose centre no known region holds
        if (res.region.chebyshev.radius > 10 * tol.radius) {
          passed.set(key, built);
          continue;
        }
      }
      const g = index();
      if (g.locate(built.region.chebyshev.center, tol.inside) >= 0) {
        passed.set(key, built);
        continue;
      }
      push(key, built);
    }
    // a degenerate point (a facet's guess failed LICQ): the other bases of the same point, active
    // sets with one row swapped for a row dependent on R's, are regions of other tilings of the
    // zone, added whatever their size and overlap (a guess across a facet passed over above is
    // taken here: which tiling an exploration holds depends on where it landed)
    if (degenerate)
      for (const swap of swapGuesses(problem, R.activeSet, R.chebyshev.center)) {
        const key = swap.join(',');
        if (byKey.has(key) || failed.has(key) || licqFailed.has(key) || swapped.has(key)) continue;
        swapped.add(key);
        let built = passed.get(key);
        if (!built) {
          const res = buildRegion(problem, swap, lp, lean);
          if (!res.ok) {
            failed.add(key);
            continue;
          }
          built = { region: res.region, box: res.bbox };
        }
        push(key, built);
      }
  }
  return { added, cut: false };
}

/** swapGuesses' work arrays (one set per thread, grown on demand; every entry read is written first, bar the two masks, cleared per call) */
const swapWork = { k: 0, nt: 0, nc: 0, nz: 0, L: new Float64Array(0), V: new Float64Array(0), y: new Float64Array(0), c: new Float64Array(0), u: new Float64Array(0), mu: new Float64Array(0), support: new Uint8Array(0), inSet: new Uint8Array(0) };
function swapScratch(k: number, nt: number, nc: number, nz: number): typeof swapWork {
  const w = swapWork;
  if (w.k < k || w.nt < nt) {
    w.k = Math.max(w.k, 2 * k);
    w.nt = Math.max(w.nt, nt);
    w.L = new Float64Array(w.k * w.k);
    w.V = new Float64Array(w.k * (w.nt + 1));
    w.y = new Float64Array(w.k);
    w.c = new Float64Array(w.k);
    w.u = new Float64Array(w.k);
    w.mu = new Float64Array(w.k);
  }
  if (w.nc !== nc) {
    w.nc = nc;
    w.inSet = new Uint8Array(nc);
  }
  if (w.nz !== nz) {
    w.nz = nz;
    w.support = new Uint8Array(nz);
  }
  return w;
}

/**
 * The active sets one swap away from `activeSet` at a degenerate point: for every row j off the set
 * that depends on the set's rows (G_j in their span: the Schur complement of M_AA in M over
 * A ∪ {j}, M = G H⁻¹ Gᵀ, at most 2·tol.rank × M_jj, the Jacobi-scaled pivot `buildRegion`'s LICQ
 * test refuses), the set with j in place of each row of the combination (coefficient of G_j's
 * expansion above 1e-9 relative); sorted, in ascending (j, row dropped). Alternative tilings of a
 * degenerate zone (several active sets with the same optimiser, each region full-dimensional)
 * differ by such swaps, and which one an exploration lands in depends on where it lands, so the
 * canonical form takes them all. One Cholesky factor of M_AA, then O(k²) per row.
 */
export function swapGuesses(problem: MpqpProblem, activeSet: readonly number[], centre: ArrayLike<number>): number[][] {
  const out: number[][] = [];
  const k = activeSet.length;
  if (k === 0) return out;
  const nc = problem.nc;
  const ws = qpWorkspace(problem);
  const M = ws.M;
  const w = swapScratch(k, problem.ntheta, nc, problem.nz);
  const L = w.L;
  for (let a = 0; a < k; a++) for (let b = 0; b <= a; b++) L[a * k + b] = M[activeSet[a] * nc + activeSet[b]];
  if (!choleskyInPlace(L, k, 0)) return out;
  const y = w.y;
  const c = w.c;
  // v = L⁻¹ [wc_A, S_A] (constant in column 0, θ columns after)
  const nt = problem.ntheta;
  const S = ws.S;
  const wc = ws.wc;
  const V = w.V;
  for (let a = 0; a < k; a++) {
    const ra = activeSet[a];
    for (let t = 0; t <= nt; t++) {
      let v = t === 0 ? wc[ra] : S[ra * nt + t - 1];
      for (let b = 0; b < a; b++) v -= L[a * k + b] * V[b * (nt + 1) + t];
      V[a * (nt + 1) + t] = v / L[a * k + a];
    }
  }
  /** row j's slack over R, r_j − yᵀ v (y = L⁻¹ M_Aj), is zero in every column within 1e-8 of its terms */
  const tightThroughout = (j: number): boolean => {
    for (let t = 0; t <= nt; t++) {
      let v = t === 0 ? wc[j] : S[j * nt + t - 1];
      let size = Math.abs(v);
      for (let a = 0; a < k; a++) {
        const p = y[a] * V[a * (nt + 1) + t];
        v -= p;
        size += Math.abs(p);
      }
      if (Math.abs(v) > 1e-8 * size) return false;
    }
    return true;
  };
  // μ = M_AA⁻¹ r_A(θc) at R's centre θc: row j's slack there is r_j(θc) − M_jA μ, O(k) per row — a
  // row clearly slack at the centre is not tight throughout, and is passed over before its O(k²) test
  const u = w.u;
  for (let a = 0; a < k; a++) {
    let v = V[a * (nt + 1)];
    for (let t = 0; t < nt; t++) v += V[a * (nt + 1) + t + 1] * centre[t];
    u[a] = v;
  }
  const mu = w.mu;
  for (let a = k - 1; a >= 0; a--) {
    let t = u[a];
    for (let b = a + 1; b < k; b++) t -= L[b * k + a] * mu[b];
    mu[a] = t / L[a * k + a];
  }
  // G_j in span(G_A) needs its nonzeros among theirs
  const nz = rowNonzeros(problem);
  const support = w.support;
  const inSet = w.inSet;
  support.fill(0);
  inSet.fill(0);
  for (const i of activeSet) {
    inSet[i] = 1;
    for (let e = nz.ptr[i]; e < nz.ptr[i + 1]; e++) support[nz.idx[e]] = 1;
  }
  rows: for (let j = 0; j < nc; j++) {
    if (inSet[j]) continue;
    const mjj = M[j * nc + j];
    if (!(mjj > 0)) continue;
    let slack = wc[j];
    let size = Math.abs(slack);
    for (let t = 0; t < nt; t++) {
      const p = S[j * nt + t] * centre[t];
      slack += p;
      size += Math.abs(p);
    }
    for (let a = 0; a < k; a++) {
      const p = M[j * nc + activeSet[a]] * mu[a];
      slack -= p;
      size += Math.abs(p);
    }
    // (1e-4: far looser than the test below, so rounding in μ where M_AA is ill-conditioned does not decide)
    if (Math.abs(slack) > 1e-4 * size) continue;
    for (let e = nz.ptr[j]; e < nz.ptr[j + 1]; e++) if (!support[nz.idx[e]]) continue rows;
    // L y = M_Aj, d = M_jj − yᵀy
    let d = mjj;
    for (let a = 0; a < k; a++) {
      let t = M[activeSet[a] * nc + j];
      for (let b = 0; b < a; b++) t -= L[a * k + b] * y[b];
      y[a] = t / L[a * k + a];
      d -= y[a] * y[a];
    }
    if (d > 2 * tol.rank * mjj) continue;
    // j must be tight all over R (its slack wc_j + S_j θ + M_jA λ_A(θ), with M_AA λ_A = −(wc_A + S_A θ),
    // zero as an affine function): on the overlap of two alternative regions both bases' rows are
    // tight, so a row tight only on a plane (a swap across a facet, where a rate limit meets a bound)
    // gives no overlapping region, and building its swap would be wasted (mixer-5d-n10: 6.3 M LPs)
    if (!tightThroughout(j)) continue;
    // Lᵀ c = y: G_j ≈ Σ c_a G_{A_a} (in the M metric)
    let cmax = 0;
    for (let a = k - 1; a >= 0; a--) {
      let t = y[a];
      for (let b = a + 1; b < k; b++) t -= L[b * k + a] * c[b];
      c[a] = t / L[a * k + a];
      cmax = Math.max(cmax, Math.abs(c[a]));
    }
    for (let a = 0; a < k; a++) {
      if (!(Math.abs(c[a]) > 1e-9 * cmax)) continue;
      const swap = activeSet.filter((r) => r !== activeSet[a]);
      swap.push(j);
      out.push(swap.sort((x, y2) => x - y2));
    }
  }
  return out;
}

/**
 * Neighbours of every non-box facet, from the regions alone: region S is across facet f of R when
 * S has a facet on the same hyperplane with the opposite orientation (normals within 1e-6, offsets
 * within 1e-5 times the box scale) and the two facets overlap in a piece of radius > 10·tol.radius
 * within the hyperplane (the exploration's thinnest piece; intervals in 2-D θ, one Chebyshev LP
 * otherwise, unless a certificate of facet-pairs.ts gives the LP's answer without solving it: a
 * point deep inside both facets, or a slab proved by weak duality that leaves no room). Candidates are found by sorting every facet by a fixed linear function of its
 * sign-normalised hyperplane and comparing only facets whose values are within the tolerance, then
 * their boxes; so no step looks at all regions. Result: per region, per facet, ascending indices.
 * With `share`, only every `count`-th cluster of facets from the `index`-th is done (the others'
 * lists stay empty): `count` shares computed apart (threads) and put together by
 * `mergeNeighbours` are the lists computed at once, since every pair is tested in one cluster.
 * `options.shouldStop` is asked before each cluster: once true, the clusters left keep empty lists
 * and `options.counts.cut` is set (the caller marks the result incomplete).
 */
export function canonicalNeighbours(
  problem: MpqpProblem,
  regions: readonly CriticalRegion[],
  boxes: readonly { lo: ArrayLike<number>; hi: ArrayLike<number> }[],
  lp: LpEngine,
  progress?: (step: 'neighbours', done: number, total: number) => void,
  share?: { index: number; count: number },
  options: NeighbourOptions = {},
): number[][][] {
  const nt = problem.ntheta;
  let scale = 1;
  for (let j = 0; j < nt; j++) scale = Math.max(scale, problem.box.upper[j] - problem.box.lower[j]);
  const aTol = 1e-6;
  const bTol = 1e-5 * scale;
  const minPiece = 10 * tol.radius;
  const weights = Array.from({ length: nt }, (_, j) => 1 / (j + 1.5));
  const bWeight = 1e-3 / scale;
  let window = bWeight * bTol;
  for (const w of weights) window += w * aTol;
  // the non-box facets as columns (region, facet, value, sign), sorted by value (then region,
  // facet): typed arrays, not an object per facet (memory: a 100k-region table has ~700k facets)
  let nList = 0;
  for (const R of regions) for (const fi of R.facets) if (fi.kind !== 'box') nList++;
  const ur = new Int32Array(nList);
  const uf = new Int32Array(nList);
  const uv = new Float64Array(nList);
  const us = new Int8Array(nList);
  nList = 0;
  regions.forEach((R, r) =>
    R.facets.forEach((fi, f) => {
      if (fi.kind === 'box') return;
      const a = R.A[f];
      let j0 = 0;
      while (j0 < nt - 1 && Math.abs(a[j0]) <= 1e-3) j0++;
      const sign = a[j0] < 0 ? -1 : 1;
      let v = bWeight * sign * R.b[f];
      for (let j = 0; j < nt; j++) v += weights[j] * sign * a[j];
      ur[nList] = r;
      uf[nList] = f;
      uv[nList] = v;
      us[nList] = sign;
      nList++;
    }),
  );
  // by value, ties by (region, facet): the order the columns were filled in, which a stable sort keeps
  const order = sortedOrder(uv.subarray(0, nList));
  const list = { r: new Int32Array(nList), f: new Int32Array(nList), v: new Float64Array(nList), sign: new Int8Array(nList), length: nList };
  for (let i = 0; i < nList; i++) {
    const q = order[i];
    list.r[i] = ur[q];
    list.f[i] = uf[q];
    list.v[i] = uv[q];
    list.sign[i] = us[q];
  }
  // the hinted twins as partners in `list` (−1: none)
  let partner: Int32Array | null = null;
  if (options.twinHints && options.twinHints.length > 0) {
    const off = new Int32Array(regions.length + 1);
    regions.forEach((R, r) => (off[r + 1] = off[r] + R.facets.length));
    const posOf = new Int32Array(off[regions.length]).fill(-1);
    for (let i = 0; i < nList; i++) posOf[off[list.r[i]] + list.f[i]] = i;
    partner = new Int32Array(nList).fill(-1);
    const h = options.twinHints;
    for (let t = 0; t + 3 < h.length; t += 4) {
      if (h[t] >= regions.length || h[t + 2] >= regions.length) continue;
      const i = posOf[off[h[t]] + h[t + 1]];
      const k = posOf[off[h[t + 2]] + h[t + 3]];
      if (i < 0 || k < 0) continue;
      partner[i] = k;
      partner[k] = i;
    }
  }
  // neighbours found: (facet of `list`, region across) pairs, gathered into per-facet lists at the end
  let hitFacet = new Int32Array(1024);
  let hitRegion = new Int32Array(1024);
  let nHits = 0;
  const hit = (i: number, region: number): void => {
    if (nHits === hitFacet.length) {
      hitFacet = doubled(hitFacet);
      hitRegion = doubled(hitRegion);
    }
    hitFacet[nHits] = i;
    hitRegion[nHits] = region;
    nHits++;
  };
  const meets = (x: number, y: number): boolean => {
    const bx = boxes[x];
    const by = boxes[y];
    for (let j = 0; j < nt; j++) if (bx.lo[j] > by.hi[j] + minPiece || by.lo[j] > bx.hi[j] + minPiece) return false;
    return true;
  };
  // pass 1: the candidate pairs (list[i], list[k]), i < k (the frame is always the earlier facet's,
  // whatever the order of enumeration): opposite facets on one hyperplane whose regions' boxes
  // meet, cluster by cluster (`starts`: where each cluster's pairs begin)
  let pi = new Int32Array(1024);
  let pk = new Int32Array(1024);
  let np = 0;
  const candidate = (i: number, k: number): void => {
    const Pr = list.r[i];
    const Qr = list.r[k];
    if (list.sign[k] === list.sign[i] || Qr === Pr || Math.abs(list.v[k] - list.v[i]) > window) return;
    const R = regions[Pr];
    const S = regions[Qr];
    const Pf = list.f[i];
    const Qf = list.f[k];
    // opposite orientation: S's row is −(R's row)
    let d = Math.abs(R.b[Pf] + S.b[Qf]);
    if (d > bTol) return;
    d = 0;
    for (let j = 0; j < nt; j++) d = Math.max(d, Math.abs(R.A[Pf][j] + S.A[Qf][j]));
    if (d > aTol || !meets(Pr, Qr)) return;
    if (np === pi.length) {
      pi = doubled(pi);
      pk = doubled(pk);
    }
    pi[np] = i;
    pk[np] = k;
    np++;
  };
  // Twin facets. In a partition, the regions on one side of a hyperplane H have disjoint
  // interiors, so their facets on H do too: a facet whose vertices are those of an opposite facet
  // (within `twinDelta`, far below the thinnest region's width 2·tol.radius) overlaps no other
  // facet of that side in more than round-off, and no pair test would accept another pair of
  // it. So in a large cluster, each facet's twin is sought first (facets sorted by their vertex
  // means), the twin pair goes to the pair test as any other, and both facets leave the sweep.
  // Measured on mixer-5d-n10 (60 693 regions, 5-D θ; 47 clusters of up to 9 504 facets on planes
  // where a rate limit and a bound swap): every facet has exactly one neighbour, yet the sweep
  // met 16.2 M pairs of boxes for 240 k neighbours. Needs the vertex lists (θ of 3 or more
  // dimensions, certificates not turned off); elsewhere, and for facets without a twin, the sweep
  // as before.
  const twinDelta = 1e-10 * scale;
  const twinsFrom = options.twinsFrom ?? TWINS_FROM;
  const twins = nt >= 3 && options.certificates !== false ? { pairs: null as FacetPairs | null, settled: new Uint8Array(nList) } : null;
  const meanAt = new Float64Array(nt);
  let twinCount = 0;
  const settled = twins ? twins.settled : new Uint8Array(0);
  const pairUp = (i: number, k: number): boolean => {
    const before = np;
    if (i < k) candidate(i, k);
    else candidate(k, i);
    if (np === before) return false;
    settled[i] = 1;
    settled[k] = 1;
    twinCount++;
    if (options.twinsOut) options.twinsOut.push(list.r[i], list.f[i], list.r[k], list.f[k]);
    return true;
  };
  const settle = (c0: number, c1: number): number[] => {
    const all = Array.from({ length: c1 - c0 }, (_, q) => c0 + q);
    if (!twins) return all;
    // the hinted pairs first: no vertex lists needed for them
    let left = c1 - c0;
    if (partner)
      for (let i = c0; i < c1; i++) {
        const k = partner[i];
        if (k < c0 || k >= c1 || settled[i] || settled[k] || list.sign[k] === list.sign[i]) continue;
        if (pairUp(i, k)) left -= 2;
      }
    if (left < 2) return all.filter((i) => !settled[i]);
    twins.pairs ??= new FacetPairs(regions, boxes, nt, minPiece, { vertices: true });
    const tp = twins.pairs;
    // each facet's key: a fixed linear function of its vertex mean (NaN: no vertex list, or paired)
    const key = new Float64Array(c1 - c0);
    for (let q = 0; q < key.length; q++) {
      const i = c0 + q;
      if (settled[i] || !tp.facetMean(list.r[i], list.f[i], meanAt)) {
        key[q] = NaN;
        continue;
      }
      let v = 0;
      for (let j = 0; j < nt; j++) v += weights[j] * meanAt[j];
      key[q] = v;
    }
    let reach = 0;
    for (const w of weights) reach += w * twinDelta;
    const byKey = all.filter((i) => !Number.isNaN(key[i - c0])).sort((x, y) => key[x - c0] - key[y - c0] || x - y);
    for (let q = 0; q < byKey.length; q++) {
      const i = byKey[q];
      if (settled[i]) continue;
      for (let t = q + 1; t < byKey.length && key[byKey[t] - c0] - key[i - c0] <= reach; t++) {
        const k = byKey[t];
        if (settled[k] || list.sign[k] === list.sign[i]) continue;
        if (!tp.sameVertices(list.r[i], list.f[i], list.r[k], list.f[k], twinDelta)) continue;
        if (pairUp(i, k)) break;
      }
    }
    return all.filter((i) => !settled[i]);
  };
  const starts: number[] = [];
  const firsts: number[] = [];
  // clusters: runs of the sorted list with consecutive values within the window (no pair across
  // two clusters is within it). Every facet on one hyperplane lands in one cluster — thousands in
  // a table whose regions share long planes (saturation limits, arrangements) — so a large
  // cluster is swept along one axis of the boxes (only pairs whose boxes meet on it) instead of
  // comparing every pair: the same pairs are tested, without the quadratic count.
  for (let c0 = 0, ordinal = 0; c0 < list.length; ordinal++) {
    if (options.twinsOut && options.shouldStop?.()) break;
    let c1 = c0 + 1;
    while (c1 < list.length && list.v[c1] - list.v[c1 - 1] <= window) c1++;
    if (share && ordinal % share.count !== share.index) {
      c0 = c1;
      continue;
    }
    starts.push(np);
    firsts.push(c0);
    const seek = twins !== null && c1 - c0 >= twinsFrom;
    // facets that met their opposite twin (`settle`) take no further part
    const open = seek ? settle(c0, c1) : null;
    if (options.twinsOut) {
      // only the twins were asked for
    } else if (!open && c1 - c0 <= 64) {
      for (let i = c0; i < c1; i++) for (let k = i + 1; k < c1; k++) candidate(i, k);
    } else if (open && open.length <= 64) {
      for (let q = 0; q < open.length; q++) for (let t = q + 1; t < open.length; t++) candidate(open[q], open[t]);
    } else {
      // the axis on which the boxes' lows spread most
      let ax = 0;
      let spread = -1;
      for (let j = 0; j < nt; j++) {
        let lo = Infinity;
        let hi = -Infinity;
        for (let q = 0; q < (open ? open.length : c1 - c0); q++) {
          const i = open ? open[q] : c0 + q;
          const x = boxes[list.r[i]].lo[j];
          lo = Math.min(lo, x);
          hi = Math.max(hi, x);
        }
        if (hi - lo > spread) {
          spread = hi - lo;
          ax = j;
        }
      }
      const order = open ?? Array.from({ length: c1 - c0 }, (_, q) => c0 + q);
      const low = (i: number): number => boxes[list.r[i]].lo[ax];
      order.sort((x, y) => low(x) - low(y) || x - y);
      for (let q = 0; q < order.length; q++) {
        const i = order[q];
        const reach = boxes[list.r[i]].hi[ax] + minPiece;
        for (let t = q + 1; t < order.length && low(order[t]) <= reach; t++) {
          const k = order[t];
          if (i < k) candidate(i, k);
          else candidate(k, i);
        }
      }
    }
    c0 = c1;
  }
  starts.push(np);
  if (options.twinsOut) return regions.map((R) => R.facets.map(() => []));
  // LP-free decisions (facet-pairs.ts) where the overlap is a polytope (θ of 3 or more
  // dimensions) and the regions' vertices pay off: they cost a few pair LPs per region (the double
  // description), a decision a fraction of an LP, so they are used when there are at least 6
  // pairs per region met. Either way the lists are the same (a certificate gives the LP's answer).
  let pairs: FacetPairs | null = null;
  if (nt >= 3 && options.certificates !== false && np > 0) {
    const seen = new Uint8Array(regions.length);
    let met = 0;
    for (let q = 0; q < np; q++)
      for (const r of [list.r[pi[q]], list.r[pk[q]]])
        if (!seen[r]) {
          seen[r] = 1;
          met++;
        }
    // below that, only the accept at points from the regions' Chebyshev centres (no vertices: it
    // costs a fraction of the pair's frame and LP, and most pairs met there are neighbours)
    const vertices = options.certificates === true || np >= 6 * met;
    // the twins' instance has the vertex lists of the large clusters' regions built already
    pairs = vertices && twins?.pairs ? twins.pairs : new FacetPairs(regions, boxes, nt, minPiece, { vertices });
  }
  // the twins' vertex lists are let go when pass 2 does not use them
  if (twins && twins.pairs !== pairs) twins.pairs = null;
  // pass 2: each pair decided (a certificate, else the LP; list[i]'s frame built once per cluster)
  let frames = new Map<number, ReturnType<typeof slicePolytope>>();
  let tests = 0; // pair tests without `pairs`
  let clusters = 0;
  let done = 0;
  let cut = false;
  for (let c = 0; c + 1 < starts.length; c++) {
    clusters++;
    if (cut || options.shouldStop?.()) {
      // stopped: this cluster and the rest keep empty lists
      cut = true;
      continue;
    }
    done++;
    frames = new Map();
    progress?.('neighbours', firsts[c], list.length);
    for (let q = starts[c]; q < starts[c + 1]; q++) {
      const i = pi[q];
      const k = pk[q];
      const Pr = list.r[i];
      const Pf = list.f[i];
      const Qr = list.r[k];
      const Qf = list.f[k];
      const known = pairs ? pairs.decide(Pr, Pf, Qr, Qf) : -1;
      if (!pairs) tests++;
      if (known >= 0) {
        if (known === 1) {
          hit(i, Qr);
          hit(k, Pr);
        }
        continue;
      }
      const R = regions[Pr];
      let frame = frames.get(i);
      if (frame === undefined) {
        frame = slicePolytope(R.A, R.b, R.A[Pf], R.b[Pf], Pf, 0);
        frames.set(i, frame);
      }
      if (!frame) continue;
      const slice = frame.sliceOf(regions[Qr], Qf);
      if (!slice || !overlapsFacet(frame, slice, minPiece, lp)) continue;
      hit(i, Qr);
      hit(k, Pr);
    }
  }
  // per region, per facet: the regions across, ascending, in arrays of their exact length (a list
  // grown by push keeps room for 16 more: ~150 B per facet of a big table)
  const at = new Int32Array(nList + 1);
  for (let h = 0; h < nHits; h++) at[hitFacet[h] + 1]++;
  for (let i = 0; i < nList; i++) at[i + 1] += at[i];
  const fill = at.slice(0, nList);
  const across = new Int32Array(nHits);
  for (let h = 0; h < nHits; h++) across[fill[hitFacet[h]]++] = hitRegion[h];
  const out: number[][][] = regions.map((R) => R.facets.map(() => []));
  for (let i = 0; i < nList; i++) {
    if (at[i + 1] === at[i]) continue;
    const ids = across.subarray(at[i], at[i + 1]).sort();
    out[list.r[i]][list.f[i]] = Array.from(ids);
  }
  if (options.counts) {
    const c = options.counts;
    if (pairs) addPairCounts(c, pairs.counts);
    else {
      c.tests += tests;
      c.lps += tests;
    }
    c.clusters += clusters;
    c.clustersDone += done;
    c.twins += twinCount;
    c.cut = c.cut || cut;
  }
  return out;
}

/**
 * The twin facet pairs (`canonicalNeighbours`) among `regions` in clusters of at least `minSize`
 * facets, as quadruples (region, facet, region, facet) of `regions`: built ahead by a worker over
 * the regions it explored (its code warm, the vertex lists built beside its other work), for
 * `NeighbourOptions.twinHints` once mapped to the union's indices. `shouldStop` ends it early
 * (fewer hints, the same result).
 */
export function twinPairs(problem: MpqpProblem, regions: readonly CriticalRegion[], boxes: readonly { lo: ArrayLike<number>; hi: ArrayLike<number> }[], minSize: number, shouldStop?: () => boolean): number[] {
  const out: number[] = [];
  if (problem.ntheta < 3) return out;
  canonicalNeighbours(problem, regions, boxes, { lps: 0, reference: false }, undefined, undefined, { twinsFrom: minSize, twinsOut: out, shouldStop });
  return out;
}

/** The neighbour lists of `canonicalNeighbours` computed in shares, put together (ascending indices). */
export function mergeNeighbours(shares: readonly number[][][][]): number[][][] {
  const out = shares[0].map((R, r) => R.map((_, f) => shares.flatMap((s) => s[r][f])));
  for (const R of out) for (const f of R) f.sort((x, y) => x - y);
  return out;
}

/**
 * The i-th (0-based) of k sub-boxes of a box: recursive bisection, each time across the axis that
 * is widest relative to the whole box (lowest index on ties), the k parts shared ⌊k/2⌋ : ⌈k/2⌉ and
 * the cut placed in that proportion. The k sub-boxes tile the box; each face of a cut is shared by
 * exactly the sub-boxes on either side. Arrays are new (caller owns them).
 */
export function subBox(box: { lower: ArrayLike<number>; upper: ArrayLike<number> }, i: number, k: number): { lower: number[]; upper: number[] } {
  return splitBox(box, i, k, []); // every weight 1 (x · 1 = x exactly: the same cuts as ever)
}
