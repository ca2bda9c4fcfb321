/**
 * The generic multi-parametric QP the engine solves:
 *
 *   J(z, θ) = ½ zᵀ H z + (F θ + c)ᵀ z + ½ θᵀ Y θ
 *   subject to  G z ≤ w + E θ,   θ ∈ box
 *
 * The engine knows nothing of what z and θ mean: a formulation (src/formulation/) builds the
 * problem and describes its blocks; the law stored per region is z[0 .. lawSize).
 * Matrices are dense row-major Float64Array. Constraint rows are scaled so that the row
 * [G_i, −E_i] has unit Euclidean norm (labels keep their meaning), and rows that are
 * positive multiples of another row of [G −E w] are merged into one (see `mergedFrom`).
 */
export interface MpqpProblem {
  nz: number; // number of decision variables
  ntheta: number; // number of parameters
  lawSize: number; // the law stored per region is z[0..lawSize)
  nc: number; // number of constraint rows after merging
  H: Float64Array; // nz×nz, symmetric positive definite
  F: Float64Array; // nz×ntheta
  c: Float64Array; // nz, the constant linear term
  Y: Float64Array; // ntheta×ntheta, symmetric
  G: Float64Array; // nc×nz
  w: Float64Array; // nc
  E: Float64Array; // nc×ntheta
  box: { lower: Float64Array; upper: Float64Array }; // ntheta each
  /** human meaning of each row, e.g. "u1(0) <= 1", "x2(3) >= -2"; merged rows labelled by mergedRowLabel (src/mpqp/labels.ts), e.g. "u1 <= 1 at k = 2, 3, 4" */
  labels: string[];
  /** for each row, the indices of the original (unmerged) rows it stands for */
  mergedFrom: number[][];
  thetaNames: string[];
  /** names of the law's entries z[0..lawSize) */
  lawNames: string[];
}

/** An affine map θ ↦ F θ + g with F rows×ntheta (row-major nested arrays, for JSON). */
export interface AffineMap {
  F: number[][];
  g: number[];
}

/** A quadratic θ ↦ θᵀ Q θ + qᵀ θ + r. */
export interface QuadraticForm {
  Q: number[][];
  q: number[];
  r: number;
}

/** A critical region: polyhedron {θ : A θ ≤ b} with a single optimal active set. */
export interface CriticalRegion {
  id: number;
  /** indices into the mpQP constraint rows, ascending; linearly independent (LICQ holds) */
  activeSet: number[];
  /** non-redundant half-spaces, each row of A with unit norm; box facets included when they bound */
  A: number[][];
  b: number[];
  /** for each half-space row: where it comes from */
  facets: FacetInfo[];
  chebyshev: { center: number[]; radius: number };
  /** the law z[0..lawSize) = law.F θ + law.g  (lawSize rows) */
  law: AffineMap;
  /** the whole decision vector z = moves.F θ + moves.g  (nz rows); absent in a lean table (`SolveOptions.lean`) */
  moves?: AffineMap;
  /** optimal cost J*(θ) on this region; absent in a lean table (`SolveOptions.lean`) */
  value?: QuadraticForm;
}

export interface FacetInfo {
  /** 'primal': constraint row `row` would be violated beyond; 'dual': multiplier of `row` turns negative; 'box': parameter bound */
  kind: 'primal' | 'dual' | 'box';
  /** constraint row (primal/dual) or parameter index (box) */
  row: number;
  /** ids of regions across this facet (filled by the exploration; empty when the far side is infeasible or outside the box) */
  neighbours: number[];
}

export interface SolveOptions {
  /** stop after this many regions (table marked incomplete) */
  maxRegions?: number;
  /** stop after this many seconds (table marked incomplete) */
  timeLimit?: number;
  /** LP engine for the hot path: the typed-array kernel (default) or the javascript-lp-solver reference */
  lp?: 'kernel' | 'reference';
  /** progress callback, called at most every ~100 ms */
  onProgress?: (p: Progress) => void;
  /**
   * How a facet is crossed (for measurement; defaults are best): `guess` tries the combinatorial
   * neighbour (row added across a primal facet, dropped across a dual one) before any point QP;
   * `warmStart` starts the point QP from the region's working set instead of the unconstrained point;
   * `proofs` lets the region builder drop rows by LP-free redundancy proofs (src/mpqp/prefilter.ts)
   * before its redundancy LPs (the same rows either way).
   */
  strategy?: { guess?: boolean; warmStart?: boolean; proofs?: boolean };
  /** cooperative cancellation (Ctrl-C): checked between candidates */
  shouldStop?: () => boolean;
  /**
   * lean regions: keep the law of z[0..lawSize), the half-spaces, the active set and the
   * neighbours, but not the whole move sequence (`moves`) nor the value function (`value`); the
   * table then says `lean: true` and commands that need either refuse it or say what they leave out
   */
  lean?: boolean;
  /**
   * Explore only the part of the parameter box inside this sub-box (same units as the box). Regions
   * are still whole (built over the full box); a region meeting the sub-box in a full-dimensional
   * piece is found. Used to split one exploration into parts (`joinPartitions` puts them together).
   */
  within?: { lower: ArrayLike<number>; upper: ArrayLike<number> };
  /** continue a stopped exploration from its state (`Partition.state` or a checkpoint); same problem and `within` */
  resume?: ExplorationState;
  /** told of every region built and every region whose facets are covered (threads report them to the main thread) */
  listener?: ExplorationListener;
  /** called between regions, at most every `checkpointEvery` seconds, with the state to resume from (shares the region objects) */
  onCheckpoint?: (state: ExplorationState) => void;
  /** seconds between checkpoints (default 30) */
  checkpointEvery?: number;
}

/**
 * Where an exploration stands, JSON-ready: the regions found (their neighbour lists are not used
 * on resumption), a box holding each, and the active-set keys (`activeSet.join(',')`) of the regions
 * whose facets are fully covered. Resuming covers the facets of every other region.
 */
export interface ExplorationState {
  regions: CriticalRegion[];
  boxes: { lo: number[]; hi: number[] }[];
  done: string[];
  stats: PartitionStats;
  work: ExplorationWork;
}

/** What an exploration tells its caller as it goes (see `SolveOptions.listener`). Calls are synchronous. */
export interface ExplorationListener {
  /** a region this exploration built (new to it), with a box holding it */
  found(region: CriticalRegion, box: { lo: ArrayLike<number>; hi: ArrayLike<number> }): void;
  /** the facets of the region with this active-set key are covered (inside `within`, when given) */
  covered(key: string): void;
}

export interface Progress {
  candidates: number;
  regions: number;
  lps: number;
  qps: number;
  elapsedSeconds: number;
}

/** How the pair tests were decided (counters, summed by the caller). */
export interface PairCounts {
  /** pairs that reached the overlap test (same hyperplane, opposite sides, boxes meet) */
  tests: number;
  /** decided by an interior point (neighbours) */
  accepted: number;
  /** of the accepted, those proved at a point found from the two regions' Chebyshev centres */
  centred: number;
  /** decided by a weak-duality slab of one row (not neighbours) */
  rejected: number;
  /** of those, by two opposed rows of the two regions (no vertices needed) */
  opposed: number;
  /** decided by the facets' proved boxes (not neighbours) */
  boxes: number;
  /** decided by a row that empties the hyperplane, as the LP path does (not neighbours) */
  parallel: number;
  /** left to the exact test (the Chebyshev LP; with θ of 2 dimensions, every test: intervals) */
  lps: number;
}

/** Counters of the canonical form's neighbours step (`canonicalNeighbours`, src/mpqp/canonical.ts). */
export interface NeighbourWork extends PairCounts {
  /** facet pairs tested for overlap (`tests`) and how each was decided: LP-free (accepted, rejected, boxes, parallel) or by an LP (`lps`) */
  clusters: number;
  clustersDone: number;
  /** facet pairs found as twins (the same vertices): tested as any pair, both facets then left out of their cluster's other pairs */
  twins: number;
  cut: boolean;
}

export interface PartitionStats {
  regions: number;
  candidates: number; // optimal active sets examined (feasible point QPs whose point lay in no known region)
  lps: number; // LPs solved
  qps: number; // point QPs solved, infeasibility probes across boundary facets included
  complete: boolean;
  /** why the exploration stopped: 'done' | 'max-regions' | 'time-limit' | 'interrupted' */
  stopReason: 'done' | 'max-regions' | 'time-limit' | 'interrupted';
  /**
   * An exploration's result (`solvePartition`, threads' unions, part files): the facet pieces
   * (radius > 10·tol.radius) it gave up on, no full-dimensional region holding the point across
   * having been found; a path-dependent count (warm starts, sub-boxes). A canonical partition's
   * (`joinPartitions`, the table's): the facets in `gaveUpAt` that the final regions do not cover
   * (`uncoveredFacetPiece`), each counted once, a function of the final partition; 0 in a sound table.
   */
  unresolvedPieces: number;
  /**
   * the facets the exploration gave a piece up on, as `witnessKey`s ("i,j,k:f": the region's active
   * set, the facet's index), sorted, unique; unions of runs are unions of these (never stored in the table)
   */
  gaveUpAt?: string[];
  /** a canonical partition's: the exploration's give-ups, summed over its runs (path-dependent, never stored in the table) */
  giveUps?: number;
  /** regions of Chebyshev radius ≤ 10·tol.radius (thinner than what the exploration must find; counted by `joinPartitions`) */
  thinRegions?: number;
  /** why pieces were left unresolved and facets left the vertex-list cover (depends on the run: never stored in the table) */
  causes?: CoverCauses;
  /** the canonical form's neighbours step was cut short by a stop (some facets have no neighbours listed; never stored in the table) */
  neighboursCut?: boolean;
}

/**
 * Causes, counted per event. The unresolved ones add up to `unresolvedPieces`; the fallbacks are
 * facets whose vertex list failed a numerical check and were covered by the LP difference instead.
 */
export interface CoverCauses {
  /** landings where no full-dimensional region could be built at any step (the active sets found were thin, failed LICQ or were empty) */
  noRegion: number;
  /** landings that reached full-dimensional regions, none of whose facet slice held the point */
  noSlice: number;
  /** facets whose covering stopped at its bound of 1 000 landings or of `DIFFERENCE_LPS` LPs in its difference walk (the rest of the facet counts as one piece) */
  guard: number;
  /** vertex-list fallbacks: a vertex whose tight rows do not have rank dim */
  fallbackRank: number;
  /** vertex-list fallbacks: a facet vertex on the padding box */
  fallbackBox: number;
  /** vertex-list fallbacks: more than 4 000 vertices */
  fallbackVerts: number;
  /** vertex-list fallbacks: 1 000 landings on one facet */
  fallbackGuard: number;
  /** regions found by the probes across the uncovered pieces of facets given up on (`repair` in solve.ts); 0 in older files */
  repaired?: number;
}

export const COVER_CAUSES: readonly (keyof CoverCauses)[] = ['noRegion', 'noSlice', 'guard', 'fallbackRank', 'fallbackBox', 'fallbackVerts', 'fallbackGuard', 'repaired'];

/**
 * The witness keys of a run's statistics (`PartitionStats.gaveUpAt`). A file written before they
 * were recorded (a checkpoint or part with give-ups and no list) gives one unreadable key, "?",
 * which the re-check counts as an unresolved facet: its give-ups cannot be re-checked, and are
 * never taken as covered.
 */
export function witnessesOf(stats: Pick<PartitionStats, 'unresolvedPieces' | 'gaveUpAt'> | undefined): string[] {
  if (!stats) return [];
  if (stats.gaveUpAt) return stats.gaveUpAt;
  return stats.unresolvedPieces > 0 ? ['?'] : [];
}

/** A zeroed count, or the sum of counts (missing ones count 0). */
export function sumCauses(...list: (CoverCauses | undefined)[]): Required<CoverCauses> {
  const out: Required<CoverCauses> = { noRegion: 0, noSlice: 0, guard: 0, fallbackRank: 0, fallbackBox: 0, fallbackVerts: 0, fallbackGuard: 0, repaired: 0 };
  for (const c of list) if (c) for (const k of COVER_CAUSES) out[k] += c[k] ?? 0;
  return out;
}

/** How the exploration spent its work (printed and benchmarked; not stored in the table). */
export interface ExplorationWork {
  /** neighbour active sets guessed from a facet (row added across a primal facet, dropped across a dual one) */
  guesses: number;
  /** guesses whose region held the landing point (no point QP needed) */
  guessHits: number;
  /** facet coverings started from a known neighbour's slice instead of a landing */
  seededSlices: number;
  /** landings across a facet piece */
  landings: number;
  /** LPs spent building regions (Chebyshev ball, bounding box, redundancy) */
  regionLps: number;
  /** LPs spent finding uncovered facet pieces */
  coverLps: number;
}

/** How the facets were covered (printed and benchmarked; not stored in the table). */
export interface CoverWork {
  /** facet pieces dropped as thinner than 10·tol.radius (a bound on their Chebyshev radius) while covering by vertex lists */
  thinPieces: number;
  /** facets whose vertex lists failed a numerical check, covered by the LP difference instead */
  fallbacks: number;
  /** facets covered by vertex lists with no LP at all */
  freeFacets: number;
  /** facets covered */
  facets: number;
}

export interface Partition {
  regions: CriticalRegion[];
  stats: PartitionStats;
  work?: ExplorationWork;
  /** how the facets were covered (single explorations; absent from joins of several) */
  cover?: CoverWork;
  /** a box holding each region (by index; not stored in the table), when the exploration knows it */
  boxes?: { lo: ArrayLike<number>; hi: ArrayLike<number> }[];
  /** how the canonical form's neighbours step went (joins only; not stored in the table) */
  neighbourWork?: NeighbourWork;
  /** when the exploration stopped early: where it stands, to resume from */
  state?: ExplorationState;
}
