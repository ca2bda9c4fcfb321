import { sumCauses, witnessesOf, type CoverCauses, type CoverWork, type CriticalRegion, type ExplorationState, type ExplorationWork, type MpqpProblem, type Partition, type PartitionStats, type SolveOptions } from './types.js';
import { solvePointQp, sortRows } from './pointqp.js';
import { buildRegion, type BoundingBox, type LpEngine, type RegionVertices } from './region.js';
import { chebyshevBall, findFeasiblePoint, lpMaximizeFrom } from '../lp/kernel.js';
import { luSolve } from '../linalg/dense.js';
import { GridLocator, regionContains } from '../table/locator.js';
import { tol } from '../tol.js';
import { Arena } from '../util/arena.js';
import { clipPiece, facetPiece, lastCoverFailure, pieceCentre, pieceFromVertices, subtractSlice, type CoverContext, type CoverFailure, type CoverPiece } from './cover.js';

/** fromRegionVertices' list of the region's vertices on the facet (scratch, read within the call; one per thread) */
let onFacet = new Int32Array(64);
/**
 * A facet's short-lived arrays (its frame's basis, slices, the vertex piece from its region's list):
 * views of shared 64 kB blocks instead of buffers of their own (one per thread). Nothing kept per
 * region comes from it, so a block is freed once the facets that used it are done.
 */
const facetArena = new Arena(1 << 16);
/** `Frame.project`'s rows before they are cut to the rows kept (one per thread) */
let projA = new Float64Array(64);
let projB = new Float64Array(16);

/**
 * Explore the critical regions of an mpQP by crossing facets (in the manner of Tøndel, Johansen &
 * Bemporad 2003), with the optimal active set at each new point taken from a point QP (dual
 * active-set method, LICQ-preserving working set) rather than guessed from the facet type.
 *
 * Completeness: every non-box facet of every region is covered exactly. Within the facet's
 * hyperplane we keep the slices of the neighbours found so far and search the facet minus their
 * union for an uncovered piece (polytope difference by reversed half-spaces); a piece's Chebyshev
 * centre, stepped just across, seeds the next region. A facet whose far side is infeasible lies
 * wholly on the boundary of the (convex) feasible parameter set. The adjacency graph of a
 * partition of a convex set is connected, so this reaches every full-dimensional region.
 *
 * `options.within` restricts the exploration to a sub-box: regions are still built over the whole
 * box (so a region is the same object whichever sub-box finds it), but only the parts of facets
 * inside the sub-box are covered. The sub-box meets a convex set, so the same connectivity argument
 * reaches every region meeting it in a full-dimensional piece. `options.resume` continues from the
 * state a stopped run returned (`Partition.state`) or a checkpoint handed to `onCheckpoint`.
 */
export function solvePartition(problem: MpqpProblem, options: SolveOptions = {}): Partition {
  const t0 = performance.now();
  const nt = problem.ntheta;
  const lo = problem.box.lower;
  const up = problem.box.upper;
  const within = options.within ? { lower: Float64Array.from(options.within.lower), upper: Float64Array.from(options.within.upper) } : null;
  // rows of the sub-box faces that lie inside the box (unit normals): added to every facet frame
  const cutA: number[][] = [];
  const cutB: number[] = [];
  if (within)
    for (let j = 0; j < nt; j++) {
      if (within.upper[j] < up[j]) {
        const e = new Array<number>(nt).fill(0);
        e[j] = 1;
        cutA.push(e);
        cutB.push(within.upper[j]);
      }
      if (within.lower[j] > lo[j]) {
        const e = new Array<number>(nt).fill(0);
        e[j] = -1;
        cutA.push(e);
        cutB.push(-within.lower[j]);
      }
    }
  let scale = 0;
  for (let j = 0; j < nt; j++) scale = Math.max(scale, up[j] - lo[j]);
  const step = Math.max(tol.facetStep * scale, 100 * tol.inside);
  // facet pieces thinner than this are taken as covered: the bound on any hole the table can have
  const minPiece = 10 * tol.radius;
  // vertices within this of a row's plane are on it (facet coordinates are θ-space distances)
  const coverEps = 1e-9 * Math.max(1, scale);
  /** the vertex list of the facet being covered (dim ≥ 2), null when it has none, and the context it was made in */
  let facetList: CoverPiece | null = null;
  let facetCtx: CoverContext | null = null;
  const lp: LpEngine = { lps: 0, reference: options.lp === 'reference', proofs: options.strategy?.proofs ?? true };
  const regions: CriticalRegion[] = [];
  const byActiveSet = new Map<string, number>();
  const causes: CoverCauses = sumCauses();
  /**
   * the facets this exploration gave up a piece of (`witnessKey`: active set and facet index), for
   * the re-check against the final regions (`uncoveredFacetPiece`, src/mpqp/canonical.ts)
   */
  const gaveUpAt = new Set<string>(witnessesOf(options.resume?.stats));
  const gaveUp = (R: CriticalRegion, f: number): void => {
    stats.unresolvedPieces++;
    gaveUpAt.add(witnessKey(R.activeSet, f));
  };
  const stats: PartitionStats = { regions: 0, candidates: 0, lps: 0, qps: 0, complete: true, stopReason: 'done', unresolvedPieces: 0, causes };
  const guessSets = options.strategy?.guess ?? true;
  const warmQp = options.strategy?.warmStart ?? true;
  const work: ExplorationWork = { guesses: 0, guessHits: 0, seededSlices: 0, landings: 0, regionLps: 0, coverLps: 0 };
  const cover: CoverWork = { thinPieces: 0, fallbacks: 0, freeFacets: 0, facets: 0 };
  let rng = 0x2545f491;
  const rand = (): number => {
    rng ^= rng << 13;
    rng ^= rng >>> 17;
    rng ^= rng << 5;
    return ((rng >>> 0) % 1_000_000) / 1_000_000;
  };
  let lastReport = 0;
  const report = (force = false): void => {
    if (!options.onProgress) return;
    const now = performance.now();
    if (!force && now - lastReport < 100) return;
    lastReport = now;
    options.onProgress({ candidates: stats.candidates, regions: regions.length, lps: lp.lps, qps: stats.qps, elapsedSeconds: (now - t0) / 1000 });
  };
  const listener = options.listener;
  const stopNow = (): boolean => {
    if (options.maxRegions !== undefined && regions.length >= options.maxRegions) return mark('max-regions');
    if (options.timeLimit !== undefined && (performance.now() - t0) / 1000 >= options.timeLimit) return mark('time-limit');
    if (options.shouldStop?.()) return mark('interrupted');
    return false;
  };
  const mark = (why: PartitionStats['stopReason']): boolean => {
    stats.complete = false;
    stats.stopReason = why;
    return true;
  };
  // point location: the regions a caller names first (adjacency), then the grid over bounding boxes
  const grid = new GridLocator(lo, up);
  const locate = (theta: ArrayLike<number>, slack: number, hints?: readonly number[]): number => {
    if (hints) for (const h of hints) if (regionContains(regions[h], theta, slack)) return h;
    return grid.locate(theta, slack);
  };
  const inBox = (theta: ArrayLike<number>): boolean => {
    for (let j = 0; j < nt; j++) if (theta[j] < lo[j] - tol.inside || theta[j] > up[j] + tol.inside) return false;
    return true;
  };
  /** regions known to touch each region (landings in either direction): the first place to look */
  const adjacent: number[][] = [];
  const bboxes: BoundingBox[] = [];
  /** each region's vertex list from its builder (nθ ≥ 3, when exact), until its facets are covered */
  const vertsOf: (RegionVertices | null)[] = [];
  const boxArena = new Arena();
  const link = (a: number, b: number): void => {
    if (a === b) return;
    if (!adjacent[a].includes(b)) adjacent[a].push(b);
    if (!adjacent[b].includes(a)) adjacent[b].push(a);
  };

  /** Build the region of an active set and add it unless it copies a known one; its id, or −2 when it is not full-dimensional. */
  /** regions whose facets this exploration is to cover (ids; each with the key it stands for), and where it stands */
  const pending: { id: number; key: string }[] = [];
  let head = 0;
  const done = new Set<string>(options.resume?.done ?? []);
  /** Everything needed to continue: the regions known, the keys whose facets are fully covered, the counters. */
  const exportState = (): ExplorationState => {
    const processed = new Set(done);
    return {
      regions,
      boxes: bboxes.map((bb) => ({ lo: Array.from(bb.lo), hi: Array.from(bb.hi) })),
      done: regions.map((R) => R.activeSet.join(',')).filter((k) => processed.has(k)),
      stats: { ...stats, regions: regions.length, lps: lp.lps, causes: { ...causes }, gaveUpAt: [...gaveUpAt].sort() },
      work: { ...work },
    };
  };
  /**
   * Take in the regions of a saved state: a key already known is skipped, a copy of a known region
   * under another active set maps to it; the rest are added with empty neighbour lists (those held
   * indices of the saved run). The ones not yet covered are queued.
   */
  function integrate(list: readonly { region: CriticalRegion; box: { lo: ArrayLike<number>; hi: ArrayLike<number> } }[]): void {
    for (const { region: R, box } of list) {
      const key = R.activeSet.join(',');
      if (byActiveSet.has(key)) continue;
      let id = locate(R.chebyshev.center, -0.5 * R.chebyshev.radius);
      if (id < 0) {
        id = regions.length;
        regions.push({ ...R, id, facets: R.facets.map((f) => ({ kind: f.kind, row: f.row, neighbours: [] })) });
        adjacent.push([]);
        vertsOf.push(null);
        const bb = { lo: Float64Array.from(box.lo), hi: Float64Array.from(box.hi) };
        bboxes.push(bb);
        grid.add(R.A, R.b, bb.lo, bb.hi);
      }
      byActiveSet.set(key, id);
      if (!done.has(key)) pending.push({ id, key });
    }
  }

  const addRegion = (activeSet: number[], key: string): number => {
    const lp0 = lp.lps;
    const res = buildRegion(problem, activeSet, lp, options.lean);
    work.regionLps += lp.lps - lp0;
    // a candidate is an active set satisfying LICQ whose region is built (a guess failing LICQ costs one small factorisation)
    if (res.ok || res.reason !== 'licq') stats.candidates++;
    if (!res.ok) return -2;
    // a copy of an existing region under another (degenerate) active set is not added twice: its
    // Chebyshev centre deep inside a known region and (where the vertex pass listed them) every
    // vertex within 10·tol.radius of it. A region that only overlaps another (both laws are the
    // unique optimiser there) is kept: taken for a copy, its part outside the other was a hole
    // (a 5-D tracking problem with a rate limit: 14 facets left uncovered, 8 hole witnesses)
    const dup = locate(res.region.chebyshev.center, -0.5 * res.region.chebyshev.radius);
    if (dup >= 0 && (!res.verts || verticesWithin(res.verts, regions[dup], nt, minPiece))) {
      byActiveSet.set(key, dup);
      return dup;
    }
    const id = regions.length;
    // the built object itself (a spread would read its packed moves and value into arrays)
    res.region.id = id;
    regions.push(res.region);
    adjacent.push([]);
    vertsOf.push(res.verts);
    // the box kept as two views of a shared block (two typed arrays of their own cost ~0.5 kB)
    const bb = { lo: boxArena.f64(nt), hi: boxArena.f64(nt) };
    bb.lo.set(res.bbox.lo);
    bb.hi.set(res.bbox.hi);
    bboxes.push(bb);
    grid.add(res.region.A, res.region.b, res.bbox.lo, res.bbox.hi);
    byActiveSet.set(key, id);
    pending.push({ id, key });
    listener?.found(regions[id], res.bbox);
    report();
    return id;
  };

  /**
   * Region holding θ: an existing one, a new one, or −1 when θ is infeasible; −2 when no
   * full-dimensional region could be built. `hints` are regions to test first; `guess` an active set
   * to try before the point QP (the combinatorial neighbour across a facet).
   */
  const regionAt = (theta: Float64Array, hints?: readonly number[], guess?: number[], warm?: readonly number[]): number => {
    const hit = locate(theta, tol.inside, hints);
    if (hit >= 0) return hit;
    if (guess) {
      const key = guess.join(',');
      if (!byActiveSet.has(key)) {
        work.guesses++;
        const id = addRegion(guess, key);
        if (id >= 0 && regionContains(regions[id], theta, tol.inside)) {
          work.guessHits++;
          return id;
        }
        if (id < 0) byActiveSet.set(key, -2); // never build it again
      }
    }
    stats.qps++;
    const qp = solvePointQp(problem, theta, warmQp ? warm : undefined, false);
    if (!qp.feasible) return -1;
    const key = qp.activeSet.join(',');
    const known = byActiveSet.get(key);
    if (known !== undefined) return known;
    const id = addRegion(qp.activeSet, key);
    if (id < 0) byActiveSet.set(key, -2); // never build it again
    return id;
  };

  // first region: the (sub-)box centre if feasible, else the max-margin point of {(θ, z) : G z − E θ ≤ w, θ ∈ (sub-)box}
  const slo = within ? within.lower : lo;
  const sup = within ? within.upper : up;
  if (options.resume) {
    integrate(options.resume.regions.map((region, i) => ({ region, box: options.resume!.boxes[i] })));
    Object.assign(stats, options.resume.stats, { complete: true, stopReason: 'done', causes });
    Object.assign(causes, sumCauses(options.resume.stats.causes));
    Object.assign(work, options.resume.work);
    lp.lps = options.resume.stats.lps;
  }
  // a fresh run, or a resumed one that knows no region here (a checkpoint written before the first
  // region was found, or a sub-box no known region meets): without a first region nothing would be
  // explored, and the result would read complete
  if (!options.resume || regions.length === 0) {
    const seed = firstSeed(problem, lp, slo, sup);
    if (seed) {
      let first = regionAt(seed);
      for (let tries = 0; first === -2 && tries < 20; tries++) {
        const p = Float64Array.from(seed);
        for (let j = 0; j < nt; j++) p[j] = Math.min(sup[j], Math.max(slo[j], p[j] + (rand() - 0.5) * 1e-3 * (sup[j] - slo[j])));
        first = regionAt(p);
      }
    }
  }
  // breadth-first over the regions; then, while facets given up on keep an uncovered piece, probes
  // across those pieces (`repair`) and breadth-first again from the regions they find
  const every = 1000 * (options.checkpointEvery ?? 30);
  let lastCheckpoint = performance.now();
  let probedTo = 0; // regions whose facets `repair` has probed
  for (let pass = 0; ; ) {
    if (stopNow()) break;
    if (head === pending.length) {
      if (pass >= REPAIR_PASSES || gaveUpAt.size === 0 || !repair()) break;
      pass++;
      continue;
    }
    if (options.onCheckpoint && performance.now() - lastCheckpoint >= every) {
      options.onCheckpoint(exportState());
      lastCheckpoint = performance.now();
    }
    const { id, key } = pending[head];
    const R = regions[id];
    for (let f = 0; f < R.facets.length; f++) {
      if (R.facets[f].kind === 'box') continue;
      const c0 = work.coverLps;
      cover.facets++;
      exploreFacet(R, f);
      // the facet's list is final: kept at its length (grown by push it holds room for ~16 more
      // ids, ~130 B a facet, most of a region's memory in the exploration of a big table)
      const nb = R.facets[f].neighbours;
      if (nb.length) R.facets[f].neighbours = nb.slice();
      if (work.coverLps === c0) cover.freeFacets++;
      if (stats.stopReason !== 'done') break;
    }
    if (stats.stopReason !== 'done') break;
    vertsOf[id] = null;
    head++;
    done.add(key);
    listener?.covered(key);
  }

  /**
   * Where landings failed (facets given up on, `gaveUpAt`), regions beside them may never have been
   * reached: in badly scaled problems (stacks of thin wedges whose facets nearly coincide) a
   * landing keeps meeting regions whose slice misses the piece, while a region in the wedge is
   * reached by no landing. Two kinds of probe, each solving the point QP where no known region
   * holds the point (`regionAt`) and queueing a region it finds like any other:
   * - across the uncovered piece of each facet given up on, tested against the regions found so
   *   far (`uncoveredFacetPiece`, the re-check of the canonical form), at steps 10·tol.inside …
   *   1e-3 × the box scale;
   * - just across the Chebyshev centre of every non-box facet of every region not probed before
   *   (the facet probe of `tessera gaps`: step min(radius/2, the landing step)).
   * Probes outside this run's box are skipped. Runs only after facets were given up on, so a run
   * without give-ups is unchanged. True when a new region was found.
   */
  function repair(): boolean {
    const before = regions.length;
    for (const w of [...gaveUpAt].sort()) {
      if (stopNow()) break;
      const at = parseWitnessKey(w);
      const id = at ? byActiveSet.get(at.key) : undefined;
      if (!at || id === undefined || id < 0 || at.facet >= regions[id].A.length) continue;
      const piece = uncoveredFacetPiece(regions, bboxes, id, at.facet, scale, lp);
      if (piece === null || piece === 'undecided') continue;
      const a = regions[id].A[at.facet];
      for (const h of [10 * tol.inside, 1e-6 * scale, 1e-5 * scale, 1e-4 * scale, 1e-3 * scale]) probe(piece.theta, a, h);
    }
    for (; probedTo < regions.length && !stopNow(); probedTo++) {
      const R = regions[probedTo];
      R.facets.forEach((fi, f) => {
        if (fi.kind === 'box') return;
        const frame = slicePolytope(R.A, R.b, R.A[f], R.b[f], f, 0, bboxes[R.id]);
        if (!frame || frame.dim < 1) return;
        lp.lps++;
        const ball = chebyshevBall(Float64Array.from(frame.A.subarray(0, frame.m * frame.dim)), Float64Array.from(frame.b.subarray(0, frame.m)), frame.m, frame.dim, new Float64Array(frame.dim), 1e6);
        if (!(ball.radius > 0)) return;
        probe(frame.lift(ball.center), R.A[f], Math.min(ball.radius / 2, step));
      });
    }
    const found = regions.length - before;
    causes.repaired = (causes.repaired ?? 0) + found;
    return found > 0;
  }
  function probe(on: ArrayLike<number>, a: readonly number[], h: number): void {
    const theta = Float64Array.from(on, (x, j) => x + h * a[j]);
    for (let j = 0; j < nt; j++) if (!(theta[j] >= slo[j] && theta[j] <= sup[j])) return;
    regionAt(theta);
  }

  function exploreFacet(R: CriticalRegion, f: number): void {
    const rowsA = cutA.length ? [...R.A, ...cutA] : R.A;
    const rowsB = cutA.length ? [...R.b, ...cutB] : R.b;
    const facet = slicePolytope(rowsA, rowsB, R.A[f], R.b[f], f, minPiece, bboxes[R.id]);
    if (!facet) return;
    const neighbours = R.facets[f].neighbours;
    const slices: Slice[] = [];
    // known neighbours first: regions touching R that have the same hyperplane, reversed, as a facet
    const seeded: { id: number; slice: Slice }[] = [];
    for (const id of adjacent[R.id]) {
      if (neighbours.includes(id) || !sharesHyperplane(regions[id], R.A[f], R.b[f])) continue;
      const slice = facet.sliceOf(regions[id]);
      if (!slice) continue;
      seeded.push({ id, slice });
      slices.push(slice);
      work.seededSlices++;
    }
    for (const id of neighbours) {
      const slice = facet.sliceOf(regions[id]);
      if (slice) slices.push(slice);
    }
    let covered = false;
    if (facet.dim >= 2) {
      const res = coverByVertices(R, f, facet, slices, neighbours);
      if (res === 'stopped') return;
      if (res === 'covered') covered = true;
      else {
        cover.fallbacks++;
        causes[res === 'rank' ? 'fallbackRank' : res === 'box' ? 'fallbackBox' : res === 'verts' ? 'fallbackVerts' : 'fallbackGuard']++;
      }
    }
    const walk: DifferenceWalk = { stop: stopNow };
    for (let guard = 0; guard < 1000 && !covered; guard++) {
      if (stopNow()) return;
      const lp0 = lp.lps;
      const piece = uncoveredPoint(facet, slices, minPiece, lp, walk);
      work.coverLps += lp.lps - lp0;
      if (piece === 'stopped') return;
      if (piece === 'budget') break; // the rest of the facet is given up below, as at the guard
      if (!piece) {
        covered = true;
        break;
      }
      let landing = landAcross(R, f, facet, piece);
      // a slice holding the point only within the landing tolerance would leave it uncovered (the
      // same point would come back): land again, accepting only a slice that holds it
      if (typeof landing === 'object' && !containsY(landing.slice, piece.point, tol.inside)) {
        if (!neighbours.includes(landing.id)) neighbours.push(landing.id);
        link(R.id, landing.id);
        slices.push(landing.slice);
        const again = landAcross(R, f, facet, piece, true);
        landing = again === 'infeasible' ? 'noSlice' : again;
      } else if (landing === 'noRegion' || landing === 'noSlice') {
        const again = landAcross(R, f, facet, piece, true);
        if (again !== 'infeasible') landing = again;
      }
      if (landing === 'infeasible') {
        covered = true; // far side infeasible: the facet lies on the feasibility boundary
        break;
      }
      if (landing === 'noRegion' || landing === 'noSlice') {
        slices.push(facet.ballSlice(piece.point, piece.radius)); // give up on this piece: counted, never silent
        gaveUp(R, f);
        causes[landing]++;
        continue;
      }
      if (!neighbours.includes(landing.id)) neighbours.push(landing.id);
      link(R.id, landing.id);
      slices.push(landing.slice);
    }
    if (!covered) {
      gaveUp(R, f); // guard exhausted: the rest of this facet is unresolved
      causes.guard++;
    }
    // a seeded region is a neighbour across this facet when it meets the facet in a full piece
    for (const s of seeded) {
      if (neighbours.includes(s.id)) continue;
      const lp0 = lp.lps;
      if (meetsFacet(facet, s.slice)) neighbours.push(s.id);
      work.coverLps += lp.lps - lp0;
    }
  }

  /**
   * True when the slice meets the facet in a piece of Chebyshev radius > minPiece: decided from the
   * facet's vertex list when it can be (the overlap's width bound, or a ball about its vertex mean),
   * one LP otherwise.
   */
  function meetsFacet(facet: FacetFrame, s: Slice): boolean {
    if (facet.dim >= 2 && facetList && facetCtx) {
      const ctx = facetCtx;
      let cur: CoverPiece | null | 'fail' = facetList;
      for (let i = 0; i < s.m && cur && cur !== 'fail'; i++) cur = clipPiece(cur, s.A, s.b[i], ctx, true, i * facet.dim);
      if (cur === null) return false;
      if (cur !== 'fail') {
        if (cur.widthBound <= minPiece) return false;
        if (pieceCentre(cur, facet.dim).radius > minPiece) return true;
      }
    }
    return overlapsFacet(facet, s, minPiece, lp);
  }

  /**
   * Facet f's vertex list from R's own (the builder's, nθ ≥ 3): the vertices tight at row f, in the
   * facet's coordinates, with their other tight rows renumbered to the frame's; the sub-box faces
   * (the frame's rows after R's) then cut it. Null when R has no exact list or it fails a check:
   * the caller clips a box by the facet's rows instead (`facetPiece`), as before.
   */
  function fromRegionVertices(R: CriticalRegion, f: number, facet: FacetFrame, ctx: CoverContext): { piece: CoverPiece | null; ctx: CoverContext } | null {
    const V = vertsOf[R.id];
    if (!V) return null;
    const dim = facet.dim;
    const map = facet.rowMap;
    const nOwn = R.A.length;
    let mOwn = 0;
    for (let r = 0; r < nOwn; r++) if (map[r] >= 0) mOwn++;
    // the vertices on row f, flat (CoverPiece's layout), their other tight rows in the frame's numbering
    const TO = V.tOff;
    const VT = V.t;
    if (onFacet.length < V.count) onFacet = new Int32Array(2 * V.count);
    let nv = 0;
    let len = 0;
    for (let v = 0; v < V.count; v++) {
      let on = false;
      for (let i = TO[v]; i < TO[v + 1] && !on; i++) on = VT[i] === f;
      if (!on) continue;
      onFacet[nv++] = v;
      for (let i = TO[v]; i < TO[v + 1]; i++) if (VT[i] !== f && map[VT[i]] >= 0) len++;
    }
    const x = facetArena.f64(nv * dim);
    const tOff = facetArena.i32(nv + 1);
    const t = facetArena.i32(len);
    len = 0;
    for (let q = 0; q < nv; q++) {
      const v = onFacet[q];
      for (let i = TO[v]; i < TO[v + 1]; i++) if (VT[i] !== f && map[VT[i]] >= 0) t[len++] = map[VT[i]];
      facet.toYInto(V.x, v * nt, x, q * dim);
      tOff[q + 1] = len;
    }
    const A = new Array<number>(mOwn * dim);
    for (let q = 0; q < mOwn * dim; q++) A[q] = facet.A[q];
    const b = new Array<number>(mOwn);
    for (let q = 0; q < mOwn; q++) b[q] = facet.b[q];
    const cm = facet.m - mOwn;
    const piece = pieceFromVertices(A, b, mOwn, nv, x, tOff, t, facet.A.subarray(mOwn * dim), facet.b.subarray(mOwn), cm, ctx);
    if (piece === 'fail') return null;
    return { piece, ctx };
  }

  /**
   * Cover facet f of R by vertex lists (src/mpqp/cover.ts): the uncovered part is a list of convex
   * pieces; each slice (known neighbours first, then every landing) is taken off the pieces it
   * cuts with no LP; a landing starts from a piece's vertex mean (one Chebyshev LP only when the
   * ball about it is thin). A failed check (which one is returned) or the bound of 1 000 landings
   * ('guard') hands the facet, with the slices found so far, to the LP difference.
   */
  function coverByVertices(R: CriticalRegion, f: number, facet: FacetFrame, slices: Slice[], neighbours: number[]): 'covered' | 'stopped' | CoverFailure | 'guard' {
    facetList = null;
    facetCtx = null;
    const dim = facet.dim;
    const ctx0: CoverContext = { dim, eps: coverEps, maxVerts: 4000 };
    let made: ReturnType<typeof facetPiece> | null = fromRegionVertices(R, f, facet, ctx0);
    if (made === null) {
      const box = facet.yBox(bboxes[R.id]);
      made = facetPiece(facet.A, facet.b, facet.m, box.lo, box.hi, ctx0);
    }
    if (made === 'fail') return lastCoverFailure();
    const { piece: base, ctx } = made;
    if (base === null || base.widthBound <= minPiece) {
      if (base) cover.thinPieces++;
      return 'covered'; // the facet itself is thinner than any piece we cover
    }
    facetList = base;
    facetCtx = ctx;
    let pieces: CoverPiece[] = [base];
    const dropped = { count: 0 };
    const take = (S: Slice): boolean => {
      const next: CoverPiece[] = [];
      for (const P of pieces) {
        const r = subtractSlice(P, S.A, S.b, S.m, minPiece, ctx, dropped);
        if (r === 'fail') return false;
        if (Array.isArray(r)) next.push(...r);
        else next.push(r);
      }
      pieces = next;
      return true;
    };
    const settle = (): void => {
      cover.thinPieces += dropped.count;
      dropped.count = 0;
    };
    for (const S of slices) if (!take(S)) return lastCoverFailure();
    settle();
    for (let guard = 0; guard < 1000; guard++) {
      if (stopNow()) return 'stopped';
      if (pieces.length === 0) return 'covered';
      // the widest piece first
      let best = 0;
      for (let q = 1; q < pieces.length; q++) if (pieces[q].widthBound > pieces[best].widthBound) best = q;
      const P = pieces[best];
      let centre = pieceCentre(P, dim);
      if (!(centre.radius > 10 * minPiece)) {
        lp.lps++;
        work.coverLps++;
        const ball = chebyshevBall(Float64Array.from(P.A), Float64Array.from(P.b), P.m, dim, centre.point, 1e6);
        if (!(ball.radius > minPiece)) {
          pieces.splice(best, 1);
          cover.thinPieces++;
          continue;
        }
        centre = { point: ball.center, radius: ball.radius };
      }
      let landing = landAcross(R, f, facet, centre);
      // a failed landing is tried once more strictly (cold point QP: a warm start can stop short on an ill-conditioned working set)
      if (landing === 'noRegion' || landing === 'noSlice') {
        const again = landAcross(R, f, facet, centre, true);
        if (again !== 'infeasible') landing = again;
      }
      if (landing === 'infeasible') return 'covered'; // far side infeasible: the facet lies on the feasibility boundary
      let S: Slice;
      if (landing === 'noRegion' || landing === 'noSlice') {
        S = facet.ballSlice(centre.point, centre.radius); // give up on this piece: counted, never silent
        gaveUp(R, f);
        causes[landing]++;
      } else {
        if (!neighbours.includes(landing.id)) neighbours.push(landing.id);
        link(R.id, landing.id);
        S = landing.slice;
      }
      slices.push(S);
      if (!take(S)) return lastCoverFailure();
      settle();
      if (landing !== 'noRegion' && landing !== 'noSlice' && pieces.includes(P)) {
        // the slice held the point only within the landing tolerance and left the piece whole (the
        // same landing would come back every time): land again, accepting only a slice that holds
        // the point itself; failing that the piece is given up (counted, never silent)
        const again = landAcross(R, f, facet, centre, true);
        let T: Slice;
        if (typeof again === 'object') {
          if (!neighbours.includes(again.id)) neighbours.push(again.id);
          link(R.id, again.id);
          T = again.slice;
        } else {
          gaveUp(R, f);
          causes[again === 'noRegion' ? 'noRegion' : 'noSlice']++;
          T = facet.ballSlice(centre.point, centre.radius);
        }
        slices.push(T);
        if (!take(T)) return lastCoverFailure();
        settle();
      }
    }
    return 'guard';
  }

  /**
   * The region just across facet f at the uncovered piece: try the piece centre, then nudged points
   * inside the piece; for each, steps from the nominal one down to 10·tol.inside, so that a region
   * thinner than the step is not jumped over. Accept a region whose facet slice holds the point.
   * The first try guesses the neighbour's active set from the facet (add the row across a primal
   * facet, drop it across a dual one) before falling back to the point QP.
   *
   * When every point fails, the same points are tried again with longer steps (3, 9, … times the
   * first, up to the nominal step or the cover slack, whichever is larger): just across a thin
   * piece's facet there can be a stack of regions thinner than tol.radius (active sets whose
   * multipliers vary by ~1e8 per unit θ), which are never built; the region beyond them, within
   * the cover slack of the facet, covers the piece like any neighbour (its slice is checked).
   * A landing that fails says why: 'noRegion' (no full-dimensional region could be built at any
   * step) or 'noSlice' (regions were reached, none whose slice held the point).
   */
  function landAcross(R: CriticalRegion, f: number, facet: FacetFrame, piece: { point: Float64Array; radius: number }, strict = false): { id: number; slice: Slice } | 'infeasible' | 'noRegion' | 'noSlice' {
    work.landings++;
    return landFrom(R, f, facet, piece, strict);
  }

  /** {z : G z ≤ w + E θ} is non-empty, by a phase-1 LP (the Chebyshev LP with its radius free; counted). */
  function feasibleByLp(theta: Float64Array): boolean {
    const { nz, nc } = problem;
    const b = Float64Array.from(problem.w);
    for (let i = 0; i < nc; i++) for (let j = 0; j < nt; j++) b[i] += problem.E[i * nt + j] * theta[j];
    lp.lps++;
    work.coverLps++;
    return findFeasiblePoint(problem.G, b, nc, nz) !== null;
  }

  function landFrom(R: CriticalRegion, f: number, facet: FacetFrame, piece: { point: Float64Array; radius: number }, strict: boolean): { id: number; slice: Slice } | 'infeasible' | 'noRegion' | 'noSlice' {
    const h0 = Math.min(step, 0.1 * piece.radius);
    const fi = R.facets[f];
    // the guess across a primal facet is made only when a step tries it (most landings hit a known region first)
    let primalGuess: number[] | null = null;
    const guessAcross = (): number[] => {
      if (primalGuess === null) {
        primalGuess = R.activeSet.slice();
        primalGuess.push(fi.row);
        sortRows(primalGuess);
      }
      return primalGuess;
    };
    const dualGuess = fi.kind === 'primal' ? null : R.activeSet.filter((i) => i !== fi.row);
    const hints = [...fi.neighbours, ...adjacent[R.id]];
    // the dual method warm-started from R's working set (minus the row across a dual facet) adds the row itself
    const warm = dualGuess ?? R.activeSet;
    let sawFeasible = false;
    let sawRegion = false;
    /** the points whose steps reached feasible parameters: tried again with longer steps */
    const again: Float64Array[] = [];
    /** the region at θ = lift(y) + h·a when its slice holds y; 'infeasible' (−1), or null */
    const at = (y: Float64Array, base: Float64Array, h: number, useGuess: boolean, slack = strict ? tol.inside : 1e3 * tol.inside): { id: number; slice: Slice } | 'infeasible' | 'out' | null => {
      const theta = base.slice();
      for (let j = 0; j < nt; j++) theta[j] += h * R.A[f][j];
      if (!inBox(theta)) return 'out';
      // strict: the point QP from cold (a warm start on an ill-conditioned working set can stop short)
      const id = regionAt(theta, hints, useGuess ? (dualGuess ?? guessAcross()) : undefined, strict ? undefined : warm);
      // no region from a feasible point QP: near the edge of the feasible set the dual method can
      // report a nearly dependent working set (multipliers ~1e16) as feasible; a phase-1 LP decides
      if (id === -1 || (id === -2 && !feasibleByLp(theta))) return 'infeasible';
      sawFeasible = true;
      if (id < 0) return null;
      sawRegion = true;
      const slice = facet.sliceOf(regions[id]);
      return slice && containsY(slice, y, slack) ? { id, slice } : null;
    };
    for (let attempt = 0; attempt < 6; attempt++) {
      const y = piece.point.slice();
      // nudge inside the piece: a structured point may sit exactly where regions meet
      if (attempt > 0) for (let j = 0; j < y.length; j++) y[j] += (rand() - 0.5) * 0.5 * piece.radius;
      const base = facet.lift(y);
      let infeasibleSteps = 0;
      let feasibleHere = false;
      for (let h = h0; h >= 10 * tol.inside; h /= 10) {
        const r = at(y, base, h, guessSets && attempt === 0 && h === h0);
        if (r === 'out') break;
        if (r === 'infeasible') {
          if (++infeasibleSteps >= 2 && !sawFeasible) break; // two steps, both infeasible: the boundary
          continue;
        }
        feasibleHere = true;
        if (r) return r;
      }
      if (attempt === 0 && !sawFeasible) return 'infeasible';
      if (feasibleHere) again.push(y);
    }
    const hMax = Math.max(step, minPiece);
    for (const y of again) {
      const base = facet.lift(y);
      for (let h = 3 * h0; h <= hMax; h *= 3) {
        // a region this far off must hold the point itself, not just within the landing tolerance
        const r = at(y, base, h, false, tol.inside);
        if (r === 'out') break;
        if (r && r !== 'infeasible') return r;
      }
    }
    return sawRegion ? 'noSlice' : 'noRegion';
  }

  stats.regions = regions.length;
  stats.lps = lp.lps;
  stats.gaveUpAt = [...gaveUpAt].sort();
  report(true);
  return stats.complete ? { regions, stats, work, cover, boxes: bboxes } : { regions, stats, work, cover, boxes: bboxes, state: exportState() };
}

/** Every vertex of the list lies within `slack` of every (unit) row of R. */
function verticesWithin(V: RegionVertices, R: Pick<CriticalRegion, 'A' | 'b'>, nt: number, slack: number): boolean {
  for (let k = 0; k < V.count; k++) if (!regionContains(R, V.x.subarray(k * nt, (k + 1) * nt), slack)) return false;
  return true;
}

/** The name of facet f of the region of an active set in `PartitionStats.gaveUpAt`: "i,j,k:f" (the active set's rows, then the facet's index). */
export function witnessKey(activeSet: readonly number[], f: number): string {
  return `${activeSet.join(',')}:${f}`;
}

/** A `witnessKey` read back: the active set's key ("i,j,k") and the facet index; null when malformed. */
export function parseWitnessKey(w: string): { key: string; facet: number } | null {
  const at = w.lastIndexOf(':');
  if (at < 0) return null;
  const facet = Number(w.slice(at + 1));
  return Number.isInteger(facet) && facet >= 0 ? { key: w.slice(0, at), facet } : null;
}

/**
 * A piece of facet f of regions[id] that no other region of the list covers: the Chebyshev ball
 * (in the facet's coordinates, and its centre θ on the facet) of a piece of radius > 10·tol.radius,
 * or null when the facet is covered. The same test as the exploration's (slices with the cover slack 10·tol.radius, pieces
 * of radius ≤ 10·tol.radius dropped), against every region whose box reaches the facet's plane
 * within the slack from the far side, in list order: a function of the list alone, whichever run
 * built it. Vertex lists first (src/mpqp/cover.ts), the LP difference when one fails a check;
 * 'undecided' when that difference passes its bound of `RECHECK_LPS` LPs (the facet is not
 * proven covered). `scale`: the widest side of the parameter box.
 */
export function uncoveredFacetPiece(
  regions: readonly Pick<CriticalRegion, 'A' | 'b' | 'chebyshev'>[],
  boxes: readonly { lo: ArrayLike<number>; hi: ArrayLike<number> }[],
  id: number,
  f: number,
  scale: number,
  lp: LpEngine,
): { point: Float64Array; radius: number; theta: Float64Array } | null | 'undecided' {
  const R = regions[id];
  const a = R.A[f];
  const beta = R.b[f];
  const nt = a.length;
  const minPiece = 10 * tol.radius;
  const bb = boxes[id];
  const frame = slicePolytope(R.A, R.b, a, beta, f, minPiece, { lo: Float64Array.from(bb.lo), hi: Float64Array.from(bb.hi) });
  if (!frame) return null;
  const slices: Slice[] = [];
  for (let k = 0; k < regions.length; k++) {
    if (k === id) continue;
    const B = boxes[k];
    let apart = false;
    let lo = 0;
    let hi = 0;
    for (let j = 0; j < nt && !apart; j++) {
      apart = B.lo[j] > bb.hi[j] + minPiece || B.hi[j] < bb.lo[j] - minPiece;
      lo += a[j] > 0 ? a[j] * B.lo[j] : a[j] * B.hi[j];
      hi += a[j] > 0 ? a[j] * B.hi[j] : a[j] * B.lo[j];
    }
    if (apart || lo > beta + minPiece || hi < beta - minPiece) continue;
    // far side only: a region on R's side that meets the plane along an edge of the facet, its rows
    // relaxed by the slack, can reach into the facet by slack/sin(angle) where the two planes meet
    // at a small angle (seen on boom-4d-n12 at horizon 16); the exploration's slices are those of
    // regions across. Far: min a·θ over the region ≥ β − slack (box bound, else one LP).
    if (lo < beta - minPiece && !farSide(regions[k], a, beta - minPiece, lp)) continue;
    const s = frame.sliceOf(regions[k]);
    if (s) slices.push(s);
  }
  const dim = frame.dim;
  if (dim >= 2) {
    const box = frame.yBox(bb);
    const made = facetPiece(frame.A, frame.b, frame.m, box.lo, box.hi, { dim, eps: 1e-9 * Math.max(1, scale), maxVerts: 4000 });
    if (made !== 'fail') {
      const { piece: base, ctx } = made;
      if (base === null || base.widthBound <= minPiece) return null;
      let pieces: CoverPiece[] = [base];
      const dropped = { count: 0 };
      let ok = true;
      for (const S of slices) {
        const next: CoverPiece[] = [];
        for (const P of pieces) {
          const r = subtractSlice(P, S.A, S.b, S.m, minPiece, ctx, dropped);
          if (r === 'fail') {
            ok = false;
            break;
          }
          if (Array.isArray(r)) next.push(...r);
          else next.push(r);
        }
        if (!ok) break;
        pieces = next;
        if (pieces.length === 0) return null;
      }
      if (ok) {
        for (const P of pieces) {
          lp.lps++;
          const ball = chebyshevBall(Float64Array.from(P.A), Float64Array.from(P.b), P.m, dim, pieceCentre(P, dim).point, 1e6);
          if (ball.radius > minPiece) return { point: ball.center, radius: ball.radius, theta: frame.lift(ball.center) };
        }
        return null;
      }
    }
  }
  const left = uncoveredPoint(frame, slices, minPiece, lp, { budget: RECHECK_LPS });
  if (left === 'budget' || left === 'stopped') return 'undecided';
  return left ? { ...left, theta: frame.lift(left.point) } : null;
}

/** True when min a·θ over the region ≥ t (one LP from its Chebyshev centre; counted). */
function farSide(Q: Pick<CriticalRegion, 'A' | 'b' | 'chebyshev'>, a: readonly number[], t: number, lp: LpEngine): boolean {
  const m = Q.A.length;
  const n = a.length;
  const A = new Float64Array(m * n);
  for (let i = 0; i < m; i++) for (let j = 0; j < n; j++) A[i * n + j] = Q.A[i][j];
  const c = new Float64Array(n);
  for (let j = 0; j < n; j++) c[j] = -a[j];
  const b = Float64Array.from(Q.b);
  // the start must be feasible: the region's Chebyshev centre, or where an exploration worker has
  // let its ball go (regions already sent, read again by `repair`), the centre found anew
  let x0 = Float64Array.from(Q.chebyshev.center);
  if (x0.length !== n) {
    lp.lps++;
    x0 = Float64Array.from(chebyshevBall(A, b, m, n, new Float64Array(n), 1e6).center);
  }
  lp.lps++;
  const r = lpMaximizeFrom(c, A, b, m, n, x0);
  return r.status === 'optimal' && -r.value >= t;
}

function firstSeed(problem: MpqpProblem, lp: LpEngine, lower: Float64Array, upper: Float64Array): Float64Array | null {
  const { ntheta: nt, nz, nc } = problem;
  const center = new Float64Array(nt);
  for (let j = 0; j < nt; j++) center[j] = 0.5 * (lower[j] + upper[j]);
  if (solvePointQp(problem, center, undefined, false).feasible) return center;
  // rows over (θ, z): −E θ + G z ≤ w, and the box on θ
  const n = nt + nz;
  const m = nc + 2 * nt;
  const A = new Float64Array(m * n);
  const b = new Float64Array(m);
  for (let i = 0; i < nc; i++) {
    for (let j = 0; j < nt; j++) A[i * n + j] = -problem.E[i * nt + j];
    for (let j = 0; j < nz; j++) A[i * n + nt + j] = problem.G[i * nz + j];
    b[i] = problem.w[i];
  }
  for (let j = 0; j < nt; j++) {
    A[(nc + 2 * j) * n + j] = 1;
    b[nc + 2 * j] = upper[j];
    A[(nc + 2 * j + 1) * n + j] = -1;
    b[nc + 2 * j + 1] = -lower[j];
  }
  lp.lps++;
  const start = new Float64Array(n);
  start.set(center);
  const p = findFeasiblePoint(A, b, m, n, start);
  if (!p) return null;
  const theta = p.slice(0, nt);
  return solvePointQp(problem, theta, undefined, false).feasible ? theta : null;
}

/** A polytope {y : A y ≤ b} in the coordinates of a facet hyperplane. */
export interface Slice {
  A: Float64Array;
  b: Float64Array;
  m: number;
}

/** A facet in the coordinates of its hyperplane, with the maps in and out of them. */
export interface FacetFrame extends Slice {
  dim: number; // d − 1
  /** vertices of the facet in its own coordinates (null when there are too many row sets to try) */
  vertices: () => Float64Array[] | null;
  lift: (y: ArrayLike<number>) => Float64Array;
  /** the region's rows on the hyperplane (row `skip`, if given, left out) */
  sliceOf: (region: Pick<CriticalRegion, 'A' | 'b'>, skip?: number) => Slice | null;
  ballSlice: (y: ArrayLike<number>, r: number) => Slice;
  /** for each row of the region (and the extra rows after them), its row in the frame, or −1 when the frame left it out */
  rowMap: Int32Array;
  /** θ = theta[off … off + d) on the hyperplane in the facet's coordinates, written to out[o … o + dim) */
  toYInto: (theta: ArrayLike<number>, off: number, out: Float64Array, o: number) => void;
  /** a box in the facet's coordinates holding the image of the θ-box [lo, hi] on the hyperplane, padded by 1 % */
  yBox: (bb: { lo: ArrayLike<number>; hi: ArrayLike<number> }) => { lo: Float64Array; hi: Float64Array };
}

/**
 * Coordinates on the hyperplane a·θ = β: θ = a β + N y with N an orthonormal basis of a⊥
 * (Gram–Schmidt on the unit vectors). In 1-D the hyperplane is a point and y is empty.
 */
export function slicePolytope(A: number[][], b: number[], a: number[], beta: number, skip: number, coverSlack: number, bbox?: BoundingBox): FacetFrame | null {
  const d = a.length;
  const dim = d - 1;
  // basis rows k·d .. k·d + d (Gram–Schmidt of the unit vectors against a and the rows before)
  const basis = facetArena.f64(Math.max(dim, 0) * d);
  const v = new Float64Array(d);
  let nb = 0;
  for (let e = 0; e < d && nb < dim; e++) {
    v.fill(0);
    v[e] = 1;
    for (let u = -1; u < nb; u++) {
      let s = 0;
      if (u < 0) for (let j = 0; j < d; j++) s += a[j] * v[j];
      else for (let j = 0; j < d; j++) s += basis[u * d + j] * v[j];
      if (u < 0) for (let j = 0; j < d; j++) v[j] -= s * a[j];
      else for (let j = 0; j < d; j++) v[j] -= s * basis[u * d + j];
    }
    let n = 0;
    for (let j = 0; j < d; j++) n += v[j] * v[j];
    n = Math.sqrt(n);
    if (n < 1e-8) continue;
    for (let j = 0; j < d; j++) basis[nb * d + j] = v[j] / n;
    nb++;
  }
  const origin = new Float64Array(d);
  for (let j = 0; j < d; j++) origin[j] = a[j] * beta;
  const frame = new Frame(d, basis, origin, coverSlack, bbox ?? null);
  return frame.init(A, b, skip) ? frame : null;
}

/**
 * A facet frame (`slicePolytope`): one object of one shape per facet, its maps as methods (closures
 * per facet and a spread copy of the slice were a tenth of a 4-D exploration's time).
 */
class Frame implements FacetFrame {
  A: Float64Array = EMPTY;
  b: Float64Array = EMPTY;
  m = 0;
  readonly dim: number;
  rowMap: Int32Array = EMPTY_INT;
  private verts: Float64Array[] | null | undefined = undefined;
  constructor(
    private readonly d: number,
    private readonly basis: Float64Array,
    private readonly origin: Float64Array,
    private readonly coverSlack: number,
    private readonly bbox: BoundingBox | null,
  ) {
    this.dim = d - 1;
  }

  /** The facet's own rows (row `skip` left out); false when a row excludes the whole hyperplane. */
  init(A: number[][], b: number[], skip: number): boolean {
    this.rowMap = new Int32Array(A.length).fill(-1);
    const own = this.project(A, b, skip, 0, this.rowMap);
    if (!own) return false;
    this.A = own.A;
    this.b = own.b;
    this.m = own.m;
    return true;
  }

  // rows written straight into the slice's arrays (sized for every row, then cut to the rows kept):
  // per row a projected copy, its normalised copy and a growing list were most of this function's garbage
  private project(rows: number[][], rhs: number[], skipRow: number, slack: number, map: Int32Array | null): Slice | null {
    const { d, dim, basis, origin, bbox } = this;
    if (projA.length < rows.length * dim) projA = new Float64Array(2 * rows.length * dim);
    if (projB.length < rows.length) projB = new Float64Array(2 * rows.length);
    const outA = projA;
    const outB = projB;
    let m = 0;
    for (let i = 0; i < rows.length; i++) {
      if (i === skipRow) continue;
      const row = rows[i];
      if (bbox && skipRow < 0) {
        // a row that holds on all of the region's bounding box holds on the facet: it cannot cut it
        let mx = 0;
        for (let j = 0; j < d; j++) mx += row[j] > 0 ? row[j] * bbox.hi[j] : row[j] * bbox.lo[j];
        if (mx <= rhs[i] + slack) continue;
      }
      let r0 = rhs[i] + slack;
      for (let j = 0; j < d; j++) r0 -= row[j] * origin[j];
      // the projected row goes into slot m; kept (divided by its length) unless it vanishes
      const o = m * dim;
      let n = 0;
      for (let k = 0; k < dim; k++) {
        let s = 0;
        for (let j = 0; j < d; j++) s += row[j] * basis[k * d + j];
        outA[o + k] = s;
        n += s * s;
      }
      n = Math.sqrt(n);
      if (n < 1e-9) {
        if (r0 < -tol.inside * 10) return null; // this row excludes the whole hyperplane
        continue;
      }
      for (let k = 0; k < dim; k++) outA[o + k] = outA[o + k] / n;
      if (map) map[i] = m;
      outB[m++] = r0 / n;
    }
    // the rows kept, at their exact length (readers take the row length as A.length / m)
    const A = facetArena.f64(m * dim);
    for (let q = 0; q < m * dim; q++) A[q] = outA[q];
    const b = facetArena.f64(m);
    for (let q = 0; q < m; q++) b[q] = outB[q];
    return { A, b, m };
  }

  vertices(): Float64Array[] | null {
    if (this.verts === undefined) this.verts = this.dim >= 2 ? polytopeVertices(this.A, this.b, this.m, this.dim) : null;
    return this.verts;
  }

  toYInto(theta: ArrayLike<number>, off: number, out: Float64Array, o: number): void {
    const { d, dim, basis, origin } = this;
    for (let k = 0; k < dim; k++) {
      let s = 0;
      for (let j = 0; j < d; j++) s += basis[k * d + j] * (theta[off + j] - origin[j]);
      out[o + k] = s;
    }
  }

  lift(y: ArrayLike<number>): Float64Array {
    const { d, dim, basis } = this;
    const th = Float64Array.from(this.origin);
    for (let k = 0; k < dim; k++) for (let j = 0; j < d; j++) th[j] += basis[k * d + j] * y[k];
    return th;
  }

  /** a neighbour covers the facet up to coverSlack: slivers thinner than that between two regions count as covered */
  sliceOf(region: Pick<CriticalRegion, 'A' | 'b'>, skipRow = -1): Slice | null {
    return this.project(region.A, region.b, skipRow, this.coverSlack, null);
  }

  ballSlice(y: ArrayLike<number>, r: number): Slice {
    // an axis box around y (inscribed in the piece's ball) marks the piece as dealt with
    const dim = this.dim;
    const Ab = new Float64Array(2 * dim * dim);
    const bb = new Float64Array(2 * dim);
    const h = r / Math.sqrt(Math.max(dim, 1));
    for (let k = 0; k < dim; k++) {
      Ab[2 * k * dim + k] = 1;
      bb[2 * k] = y[k] + h;
      Ab[(2 * k + 1) * dim + k] = -1;
      bb[2 * k + 1] = -(y[k] - h);
    }
    return { A: Ab, b: bb, m: 2 * dim };
  }

  yBox(bb: { lo: ArrayLike<number>; hi: ArrayLike<number> }): { lo: Float64Array; hi: Float64Array } {
    const { d, dim, basis, origin } = this;
    const ylo = new Float64Array(dim);
    const yhi = new Float64Array(dim);
    let w = 0;
    for (let j = 0; j < d; j++) w = Math.max(w, bb.hi[j] - bb.lo[j]);
    for (let k = 0; k < dim; k++) {
      let l = 0;
      let h = 0;
      for (let j = 0; j < d; j++) {
        const u = basis[k * d + j] * (bb.lo[j] - origin[j]);
        const v = basis[k * d + j] * (bb.hi[j] - origin[j]);
        l += Math.min(u, v);
        h += Math.max(u, v);
      }
      const pad = 0.01 * (h - l) + 1e-3 * w + 1e-9;
      ylo[k] = l - pad;
      yhi[k] = h + pad;
    }
    return { lo: ylo, hi: yhi };
  }
}
const EMPTY = new Float64Array(0);
const EMPTY_INT = new Int32Array(0);

/** True when region S has a facet on the hyperplane a·θ = β with the opposite orientation (−a·θ ≤ −β). */
function sharesHyperplane(S: CriticalRegion, a: number[], beta: number): boolean {
  const nt = a.length;
  for (let i = 0; i < S.A.length; i++) {
    if (Math.abs(S.b[i] + beta) > 1e3 * tol.inside) continue;
    let d = 0;
    for (let j = 0; j < nt; j++) d = Math.max(d, Math.abs(S.A[i][j] + a[j]));
    if (d <= 1e-7) return true;
  }
  return false;
}

/** True when the slice meets the facet in a piece of radius > minRadius. */
export function overlapsFacet(facet: FacetFrame, s: Slice, minRadius: number, lp: LpEngine): boolean {
  const dim = facet.dim;
  if (dim === 0) return containsY(s, []);
  if (dim === 1) {
    const [l0, u0] = interval(facet);
    const [l1, u1] = interval(s);
    return 0.5 * (Math.min(u0, u1) - Math.max(l0, l1)) > minRadius;
  }
  const m = facet.m + s.m;
  const A = new Float64Array(m * dim);
  A.set(facet.A);
  A.set(s.A, facet.m * dim);
  const b = new Float64Array(m);
  b.set(facet.b);
  b.set(s.b, facet.m);
  lp.lps++;
  return chebyshevBall(A, b, m, dim, new Float64Array(dim), 1e6).radius > minRadius;
}

function containsY(s: Slice, y: ArrayLike<number>, slack = 1e3 * tol.inside): boolean {
  const dim = s.m > 0 ? s.A.length / s.m : 0;
  for (let i = 0; i < s.m; i++) {
    let v = 0;
    for (let k = 0; k < dim; k++) v += s.A[i * dim + k] * y[k];
    if (v > s.b[i] + slack) return false;
  }
  return true;
}

type Row = { A: number[]; b: number };
type Ball = { point: Float64Array; radius: number };

/**
 * A node of the difference tree (`uncoveredPoint`): a piece of the facet, its rows, its Chebyshev
 * ball (undefined until solved, null when thinner than minRadius or when no point of its subtree
 * is uncovered), and where its walk stands: the row `i` of the next slice being tried, the rows
 * passed so far (`prefix`) and the child piece under way.
 */
interface DiffNode {
  rows: Row[];
  ball: Ball | null | undefined;
  i: number;
  prefix: Row[];
  child: DiffNode | null;
}

/**
 * Where the difference walk of one facet stands between calls (`uncoveredPoint`; slices are only
 * ever appended to its cover), with its bounds: `stop` (asked every 64 LPs) and `budget`, the
 * LPs all its calls may spend (`DIFFERENCE_LPS` by default).
 */
export interface DifferenceWalk {
  root?: DiffNode;
  /** LPs spent by the walk's calls so far */
  lps?: number;
  budget?: number;
  stop?: () => boolean;
}

/**
 * LPs the exploration's difference walk of one facet may spend before the rest of the facet is
 * given up (counted as the facet's guard, never silent; the re-check against the final regions
 * then decides it, `RECHECK_LPS`). The walk is exponential in the slices in the worst case: on a
 * degenerate 4-D tracking problem of our own (stacks of regions ~1e-6 thick across which the
 * landings kept failing; test/fixtures/degenerate) one facet's walk ran past 10 minutes after
 * ~2 000 landings. Bounded here, that problem's run took 42 s; at 200 000 it took 241 s.
 */
export const DIFFERENCE_LPS = 20000;

/** Rounds of `repair` (probes across the uncovered pieces of facets given up on) an exploration makes at most. */
export const REPAIR_PASSES = 3;

/**
 * LPs the re-check of one given-up facet against the final regions (`uncoveredFacetPiece`) may
 * spend; past it the facet counts as unresolved (not proven covered). Checking every facet of the
 * first 40 regions of two-carts-4d took up to 111 982 LPs (3.4 s) for a facet that is covered.
 */
export const RECHECK_LPS = 500000;

/**
 * A point of `base` not covered by the union of `cover`, with the radius of the uncovered piece it
 * is the Chebyshev centre of; null when every piece left is thinner than minRadius.
 * base \ S = ∪_i (base ∩ {s_j ≤ t_j, j < i} ∩ {s_i ≥ t_i}), applied recursively over the cover,
 * depth first, the first piece of the last level found.
 *
 * `walk` (one per facet, slices only ever appended to `cover`) resumes the depth-first walk where
 * the last call found its piece: a subtree found empty stays empty when slices are appended (they
 * only take more of it), and a piece's rows depend on its path alone, so the answer is the one a
 * walk from the root would give, without walking again through the subtrees already found empty.
 * (Walking from the root with a memo of the balls by path cost O(slices²) per call: on a facet of
 * a degenerate 4-D tracking problem that gave up pieces at 1 000 landings, 12 s of 15 in the walk
 * and the collector.)
 */
export function uncoveredPoint(base: FacetFrame, cover: Slice[], minRadius: number, lp: LpEngine, walk: DifferenceWalk = {}): Ball | null | 'stopped' | 'budget' {
  const dim = base.dim;
  if (dim === 0) {
    // 1-D θ: the facet is a point, covered when any neighbour holds it
    if (base.m > 0 && !containsY(base, [])) return null;
    for (const s of cover) if (containsY(s, [])) return null;
    return { point: new Float64Array(0), radius: Infinity };
  }
  if (dim === 1) return uncoveredInterval(base, cover, minRadius);
  if (!walk.root) {
    const rows: Row[] = [];
    for (let i = 0; i < base.m; i++) rows.push({ A: Array.from(base.A.subarray(i * dim, (i + 1) * dim)), b: base.b[i] });
    walk.root = { rows, ball: undefined, i: 0, prefix: [], child: null };
  }
  // the facet's vertices bound every linear function over every piece: a flipped row whose
  // maximum over them is within minRadius of its bound leaves a piece too thin to matter, no LP
  const verts = base.vertices();
  const budget = walk.budget ?? DIFFERENCE_LPS;
  let cut: 'stopped' | 'budget' | null = null;
  const rec = (node: DiffNode, idx: number): Ball | null => {
    if (node.ball === undefined) {
      const spent = (walk.lps = (walk.lps ?? 0) + 1);
      if (spent > budget) cut = 'budget';
      else if (walk.stop && spent % 64 === 0 && walk.stop()) cut = 'stopped';
      if (cut) return null;
      const m = node.rows.length;
      const A = new Float64Array(m * dim);
      const b = new Float64Array(m);
      node.rows.forEach((r, i) => {
        A.set(r.A, i * dim);
        b[i] = r.b;
      });
      lp.lps++;
      const cheb = chebyshevBall(A, b, m, dim, new Float64Array(dim), 1e6);
      node.ball = cheb.radius > minRadius ? { point: cheb.center, radius: cheb.radius } : null;
    }
    if (!node.ball) return null;
    if (idx === cover.length) return node.ball;
    const S = cover[idx];
    for (; node.i < S.m; node.i++) {
      const i = node.i;
      const s = Array.from(S.A.subarray(i * dim, (i + 1) * dim));
      if (!node.child) {
        // a row of the piece with the same normal and a bound no looser implies s: the flipped side is empty, no LP
        if (impliedBy(node.rows, s, S.b[i])) continue;
        if (verts && maxOver(verts, s, dim) <= S.b[i] + minRadius) {
          node.prefix.push({ A: s, b: S.b[i] });
          continue;
        }
        const flipped = { A: s.map((x) => -x), b: -S.b[i] };
        node.child = { rows: [...node.rows, ...node.prefix, flipped], ball: undefined, i: 0, prefix: [], child: null };
      }
      const res = rec(node.child, idx + 1);
      if (res || cut) return res;
      node.child = null;
      node.prefix.push({ A: s, b: S.b[i] });
    }
    // nothing uncovered below this piece: for good (later slices only take more)
    node.ball = null;
    node.prefix = [];
    return null;
  };
  const found = rec(walk.root, 0);
  return cut ?? found;
}

function maxOver(verts: Float64Array[], s: number[], dim: number): number {
  let mx = -Infinity;
  for (const v of verts) {
    let t = 0;
    for (let k = 0; k < dim; k++) t += s[k] * v[k];
    if (t > mx) mx = t;
  }
  return mx;
}

/**
 * Vertices of {y : A y ≤ b} (dim ≥ 2) by trying every set of dim rows (LU solve, then every row
 * within 1e-9): null when there would be more than 4 000 sets to try.
 */
function polytopeVertices(A: Float64Array, b: Float64Array, m: number, dim: number): Float64Array[] | null {
  let combos = 1;
  for (let k = 0; k < dim; k++) combos = (combos * (m - k)) / (k + 1);
  if (!(combos <= 4000) || m < dim) return null;
  const out: Float64Array[] = [];
  const pick = Array.from({ length: dim }, (_, k) => k);
  const M = new Float64Array(dim * dim);
  const rhs = new Float64Array(dim);
  const scratch = { a: new Float64Array(dim * dim), x: new Float64Array(dim) };
  for (;;) {
    for (let r = 0; r < dim; r++) {
      for (let k = 0; k < dim; k++) M[r * dim + k] = A[pick[r] * dim + k];
      rhs[r] = b[pick[r]];
    }
    const x = luSolve(M, dim, rhs, 1e-10, scratch);
    if (x) {
      let ok = true;
      for (let i = 0; i < m && ok; i++) {
        let t = -b[i];
        for (let k = 0; k < dim; k++) t += A[i * dim + k] * x[k];
        ok = t <= 1e-9;
      }
      if (ok) out.push(Float64Array.from(x));
    }
    let j = dim - 1;
    while (j >= 0 && pick[j] === m - dim + j) j--;
    if (j < 0) break;
    pick[j]++;
    for (let k = j + 1; k < dim; k++) pick[k] = pick[k - 1] + 1;
  }
  return out.length > dim ? out : null;
}

function impliedBy(rows: { A: number[]; b: number }[], s: number[], t: number): boolean {
  for (const r of rows) {
    if (r.b > t) continue;
    let d = 0;
    for (let j = 0; j < s.length; j++) d = Math.max(d, Math.abs(r.A[j] - s[j]));
    if (d <= 1e-9) return true;
  }
  return false;
}

/** 1-D facets (2-D θ): intervals, so the difference is exact interval arithmetic with no LP. */
function interval(s: Slice): [number, number] {
  let L = -Infinity;
  let U = Infinity;
  for (let i = 0; i < s.m; i++) {
    const a = s.A[i];
    if (a > 0) U = Math.min(U, s.b[i] / a);
    else if (a < 0) L = Math.max(L, s.b[i] / a);
  }
  return [L, U];
}

function uncoveredInterval(base: Slice, cover: Slice[], minRadius: number): { point: Float64Array; radius: number } | null {
  let pieces: [number, number][] = [interval(base)];
  for (const s of cover) {
    const [cl, cu] = interval(s);
    const next: [number, number][] = [];
    for (const [l, u] of pieces) {
      if (cu <= l || cl >= u) {
        next.push([l, u]);
        continue;
      }
      if (cl > l) next.push([l, cl]);
      if (cu < u) next.push([cu, u]);
    }
    pieces = next;
  }
  let best: [number, number] | null = null;
  for (const p of pieces) if (!best || p[1] - p[0] > best[1] - best[0]) best = p;
  if (!best || !(0.5 * (best[1] - best[0]) > minRadius)) return null;
  return { point: Float64Array.of(0.5 * (best[0] + best[1])), radius: 0.5 * (best[1] - best[0]) };
}
