/**
 * Point location for a finished table (evaluate, gaps, certify, maps, simulation): a k-d tree of
 * axis-aligned cells over the regions' bounding boxes. An internal node compares one coordinate
 * with a split value; a leaf lists, in ascending id, every region whose (padded) bounding box
 * reaches into its cell and that none of its own rows separates from the cell. A query walks down
 * (about log2 of the regions comparisons) and tests the leaf's regions in order: the first that
 * holds θ is the lowest id holding θ, because every region holding θ is listed in θ's leaf. So the
 * answer is exactly the sequential scan's, with a handful of region tests per query. A region test
 * first compares θ with the region's padded box (2·nθ comparisons; outside it the region is not
 * within the slack, the premise of the listing) and only then computes its rows.
 *
 * Splits: among the box sides inside the cell on every axis (one sweep over the sorted sides,
 * after the surface-area heuristic of ray-tracing k-d trees) and the cell's ¼, ½, ¾ points, the one
 * with the fewest expected tests for uniformly spread queries (cells listing more than 256 regions,
 * near the root, try the cell's eighths only, counted in one pass). Once the listings reach the
 * budget the remaining cells become leaves without a split search, and the row test that keeps a
 * region out of a child cell runs only for boxes straddling the split. The build is still the
 * larger part of `evaluate` on big tables: 114 379 regions (3-D), 22 s CPU for 719 157 nodes and
 * 2.7 M listings, mostly that row test and sorting the sides. On the first 6 000 regions of
 * boom-4d-n12 this took the lookups from 0.43 to 0.67 M per CPU second against the ¼/½/¾ splits
 * alone, and the box pretest another ×1.3 (paired, load ≈ 7).
 *
 * The build (`TreeGrower`) can go in parts (option `parts`, `planTree` / `growPart` / `joinTree`):
 * the top until that many cells wait, then each cell on its own, on any thread; the answers do not
 * depend on it. For nθ ≤ 4 a leaf listing more than SLAB_MIN regions also gets slab masks
 * (`leafSlabs`): the fast path tests only the listings whose range reaches θ's slab on every axis.
 *
 * Why not the growing grid (GridLocator) for this: it must look at one cell on every level, and the
 * coarse levels list the big regions of the whole table; a static tree knows every region up front
 * and splits where regions are dense. Why not the emit box tree (src/partition/boxtree.ts): that one
 * keeps float-safe splits and a C byte budget; here everything is double and in memory.
 */
import { tol } from '../tol.js';
import { packedViolation } from './packed.js';
import { LargestFirst } from '../partition/budget.js';

const SPLITS = [0.25, 0.5, 0.75];
const EIGHTHS = [0.125, 0.25, 0.375, 0.5, 0.625, 0.75, 0.875];
/** cells listing more regions than this try the cell's eighths only (the sweep sorts every side) */
const SWEEP_MAX = 256;

/** The option key through which `fromState` hands the constructor a state (not part of the public options). */
const FROM_STATE = Symbol('fromState');

/** The fields of a `BoxIndex` that queries read (`state`, `fromState`). */
const STATE_KEYS = ['n', 'size', 'A', 'b', 'rowStart', 'axis', 'split', 'left', 'right', 'leafFrom', 'leafTo', 'leafIds', 'boxLo', 'boxHi', 'rowAt', 'rowIds', 'rootLo', 'rootHi', 'A4', 'box4', 'exactFirst', 'stats', 'cellLo', 'cellHi', 'terms'] as const;

/** A `BoxIndex` as plain data (`BoxIndex.state()`): numbers, a boolean, typed arrays, the stats. */
export type BoxIndexState = { [K in (typeof STATE_KEYS)[number]]: unknown } & { n: number; slabs?: unknown };

/** Build options of a `BoxIndex` (defaults suit tables of 10 to 10⁶ regions). */
export interface BoxIndexOptions {
  /** stop splitting a cell listing at most this many regions (default 3) */
  leafSize?: number;
  /** deepest node (default 48) */
  maxDepth?: number;
  /** total leaf listings allowed, as a multiple of the region count (default 24) */
  listingBudget?: number;
  /**
   * which region answers when several hold θ: `first` = the lowest id holding θ within the slack
   * (the rule of tables before exact containment was preferred); `exact-first` = the lowest id
   * holding θ exactly, else the least largest residual within the slack, ties to the lowest id (the
   * rule of `locateScan` and `GridLocator.locate`). Default `exact-first`.
   */
  rule?: 'first' | 'exact-first';
  /**
   * grow the tree in this many parts (default 1): its top until that many cells wait, then each of
   * them with a share of the listing budget (`planTree`; the parts may grow on other threads). The
   * answers do not depend on it.
   */
  parts?: number;
}

/**
 * Static point locator over polyhedral regions {θ : A θ ≤ b}. Rows are copied into flat typed
 * arrays at construction; the caller's arrays are not kept.
 */
export class BoxIndex {
  readonly n: number;
  readonly size: number;
  private readonly A: Float64Array;
  private readonly b: Float64Array;
  private readonly rowStart: Int32Array;
  /** per node: axis (−1 for a leaf), split, children; a leaf's ids are leafIds[first[k] … first[k+1]) */
  private readonly axis: Int32Array;
  private readonly split: Float64Array;
  private readonly left: Int32Array;
  private readonly right: Int32Array;
  private readonly leafFrom: Int32Array;
  private readonly leafTo: Int32Array;
  private readonly leafIds: Int32Array;
  /** padded bounding boxes, region r's at [r·nθ … r·nθ + nθ − 1] */
  private readonly boxLo: Float64Array;
  private readonly boxHi: Float64Array;
  /**
   * per listing q (leafIds[q]), for the fast path (θ in the parameter box, slack ≥ 0): the rows that
   * may not hold somewhere in the leaf's cell, rowIds[rowAt[q] … rowAt[q + 1]); a row left out holds
   * on the whole cell with a margin for the rounding of its residual (`cellRows`)
   */
  private readonly rowAt: Int32Array;
  private readonly rowIds: Int32Array;
  /** the parameter box: a θ inside it lies in the cell of the leaf it descends to */
  private readonly rootLo: Float64Array;
  private readonly rootHi: Float64Array;
  /**
   * for nθ ≤ 4 (`locate4`): each row's a (padded with zeros) and b side by side at stride 5 (one
   * cache line or two per row instead of two or three), and the regions' padded boxes interleaved
   * (lo_0, hi_0, …) at stride 8, the missing axes (−∞, ∞); null for nθ > 4
   */
  private readonly A4: Float64Array | null;
  private readonly box4: Float64Array | null;
  private readonly exactFirst: boolean;
  /** nodes, leaves, deepest leaf, longest leaf, listings */
  readonly stats: { nodes: number; leaves: number; depth: number; longestLeaf: number; listings: number; cellRows: number };

  /**
   * `regions[i]` has rows A θ ≤ b (nθ entries each) and a bounding box `lo`/`hi` (any box that
   * holds it; it is padded here by the query slack the index serves, 100·tol.inside).
   */
  constructor(
    regions: ArrayLike<{ A: ArrayLike<ArrayLike<number>>; b: ArrayLike<number> }>,
    boxes: ArrayLike<{ lo: ArrayLike<number>; hi: ArrayLike<number> }>,
    lower: ArrayLike<number>,
    upper: ArrayLike<number>,
    options: BoxIndexOptions = {},
  ) {
    // the fields in one order whether built here or handed over (`fromState`), so every index has
    // one shape (V8 hidden class; an object whose fields are added one by one by name goes to
    // dictionary mode and made every query 1.3–1.6× slower)
    const state = (options as { [FROM_STATE]?: BoxIndexState })[FROM_STATE] ?? buildState(regions, boxes, lower, upper, options);
    {
      const s = state as unknown as BoxIndex;
      this.n = s.n;
      this.scratch = new Float64Array(Math.max(s.n, 1));
      this.point = new Float64Array(Math.max(s.n, 4));
      this.cellLo = s.cellLo;
      this.cellHi = s.cellHi;
      this.terms = s.terms;
      this.exactFirst = s.exactFirst;
      this.size = s.size;
      this.A = s.A;
      this.b = s.b;
      this.rowStart = s.rowStart;
      this.axis = s.axis;
      this.split = s.split;
      this.left = s.left;
      this.right = s.right;
      this.leafFrom = s.leafFrom;
      this.leafTo = s.leafTo;
      this.leafIds = s.leafIds;
      this.boxLo = s.boxLo;
      this.boxHi = s.boxHi;
      this.rowAt = s.rowAt;
      this.rowIds = s.rowIds;
      this.rootLo = s.rootLo;
      this.rootHi = s.rootHi;
      this.A4 = s.A4;
      this.box4 = s.box4;
      this.stats = s.stats;
    }
    // derived: handed over with the state to a worker (`state().slabs`), else (an index file, which
    // does not hold them) derived again here
    this.slabs = (state.slabs as LeafSlabs | undefined) ?? (this.A4 ? leafSlabs(this.axis, this.split, this.left, this.leafFrom, this.leafTo, this.box4!, this.rootLo, this.rootHi) : null);
  }

  /** for nθ ≤ 4: the leaves' slab masks (`leafSlabs`), null for nθ > 4 */
  private readonly slabs: LeafSlabs | null;

  private readonly cellLo: Float64Array;
  private readonly cellHi: Float64Array;
  private readonly terms: Float64Array;

  /**
   * Everything a query reads, as plain numbers and typed arrays (the arrays are this index's own,
   * not copies): what a worker thread is sent to answer queries with `BoxIndex.fromState`.
   */
  state(): BoxIndexState {
    const out: Record<string, unknown> = {};
    for (const k of STATE_KEYS) out[k] = (this as unknown as Record<string, unknown>)[k];
    // the slab masks too (not written to index files: `indexToBytes` takes STATE_KEYS only)
    out.slabs = this.slabs;
    return out as unknown as BoxIndexState;
  }

  /** An index answering exactly as the one whose `state()` this is (the arrays are used as given). */
  static fromState(s: BoxIndexState): BoxIndex {
    return new BoxIndex([], [], [], [], { [FROM_STATE]: s } as BoxIndexOptions);
  }


  /**
   * How many regions θ's leaf lists: the most region tests a query at θ makes (θ in the table's
   * units, nθ entries; NaN entries descend as the full path does).
   */
  candidates(theta: ArrayLike<number>): number {
    let k = 0;
    for (let a = this.axis[0]; a >= 0; a = this.axis[k]) k = theta[a] <= this.split[k] ? this.left[k] : this.right[k];
    return this.leafTo[k] - this.leafFrom[k];
  }

  /** True when one row of region r holds nowhere in the cell [lo, hi] (widened by pad). */
  private separated(r: number, lo: Float64Array, hi: Float64Array, pad: number): boolean {
    const n = this.n;
    for (let i = this.rowStart[r], e = this.rowStart[r + 1]; i < e; i++) {
      let mn = 0;
      for (let j = 0; j < n; j++) {
        const a = this.A[i * n + j];
        mn += a > 0 ? a * (lo[j] - pad) : a * (hi[j] + pad);
      }
      if (mn > this.b[i] + pad) return true;
    }
    return false;
  }

  /** True when region r holds θ within slack (every row ≤ b + slack; NaN θ is in no region). */
  contains(r: number, theta: ArrayLike<number>, slack: number): boolean {
    return this.violation(r, theta, slack) <= slack;
  }

  /**
   * Largest residual max_i(a_i·θ − b_i) of region r at θ (≤ 0: inside exactly); the scan stops at
   * the first row above `limit` and returns that row's residual. NaN θ gives +Infinity.
   */
  violation(r: number, theta: ArrayLike<number>, limit: number = Infinity): number {
    return packedViolation(this.A, this.b, this.rowStart, this.n, r, theta, limit);
  }

  /** Largest residual of the region the last `locate` returned (−Infinity when it returned −1). */
  lastViolation = -Infinity;

  /**
   * The region holding θ within `slack` (|slack| ≤ 100·tol.inside), or −1, by the index's `rule`:
   * the lowest id holding θ within the slack (`first`), or the lowest id holding θ exactly (every
   * row ≤ b) and else the least largest residual within the slack, ties to the lowest id
   * (`exact-first`). With `violation` false, `lastViolation` is not kept up to date (see `locateAt`).
   */
  locate(theta: ArrayLike<number>, slack: number = tol.inside, violation: boolean = true): number {
    const n = this.n;
    const th = this.scratch;
    for (let j = 0; j < n; j++) th[j] = theta[j];
    return this.locateAt(th, 0, slack, violation);
  }

  private readonly scratch: Float64Array;

  /**
   * `locate` for the θ stored at values[offset … offset + nθ − 1] (points packed one after another in
   * one array, as `parsePointsFlat` returns them): no array per point. Same rule and answer as `locate`.
   * With `violation` false, `lastViolation` is not kept up to date (it may then be any residual ≤ 0 of
   * the region returned): the caller that wants only the region saves a pass over its rows.
   *
   * A θ inside the parameter box with slack ≥ 0 (every call of evaluate, maps, certify…) takes the
   * fast path: θ copied once into a scratch array, the descent indexes the children by the
   * comparison (the right child is the left one + 1), and
   * only the rows that may not hold in the leaf's cell are computed (`cellRows`). Anything else
   * (θ outside the box or NaN, a negative slack) tests every row of every listed region.
   */
  locateAt(values: Float64Array, offset: number, slack: number = tol.inside, violation: boolean = true): number {
    const n = this.n;
    const th = this.point;
    const lo = this.rootLo;
    const hi = this.rootHi;
    let inBox = slack >= 0;
    for (let j = 0; j < n; j++) {
      const x = values[offset + j];
      th[j] = x;
      if (!(x >= lo[j] && x <= hi[j])) inBox = false;
    }
    if (!inBox) return this.locateFull(values, offset, slack);
    if (this.A4) return this.locate4(slack, violation);
    const axis = this.axis;
    const split = this.split;
    const left = this.left;
    let k = 0;
    // θ is not NaN here: (x > s) is the complement of the full path's (x <= s)
    for (let a = axis[0]; a >= 0; a = axis[k]) k = left[k] + (((th[a] > split[k]) as unknown as number) | 0);
    const ids = this.leafIds;
    const A = this.A;
    const b = this.b;
    const boxLo = this.boxLo;
    const boxHi = this.boxHi;
    const rowAt = this.rowAt;
    const rowIds = this.rowIds;
    const exactLimit = this.exactFirst ? 0 : slack;
    let near = -1;
    let nearV = Infinity;
    for (let q = this.leafFrom[k], e = this.leafTo[k]; q < e; q++) {
      // outside the padded box, the region is not within the slack either (the premise of the listing)
      let out = false;
      const r = ids[q];
      for (let j = 0; j < n; j++) {
        const x = th[j];
        if (x < boxLo[r * n + j] || x > boxHi[r * n + j]) {
          out = true;
          break;
        }
      }
      if (out) continue;
      // the residual of packedViolation over the rows kept for this cell: Σ a_j θ_j first, then − b
      let v = -Infinity;
      for (let p = rowAt[q], pe = rowAt[q + 1]; p < pe; p++) {
        const i = rowIds[p];
        let s = 0;
        for (let j = 0, o = i * n; j < n; j++) s += A[o + j] * th[j];
        const x = s - b[i];
        if (!(x <= slack)) {
          v = x;
          break;
        }
        if (x > v) v = x;
      }
      if (v <= exactLimit) {
        // the rows left out are ≤ 0 here; the largest residual over all rows on request
        this.lastViolation = violation ? packedViolation(A, b, this.rowStart, n, r, th, slack) : v;
        return r;
      }
      if (v <= slack && v < nearV) {
        near = r;
        nearV = v;
      }
    }
    this.lastViolation = near < 0 ? -Infinity : nearV;
    return near;
  }

  private readonly point: Float64Array;

  /**
   * The fast path of `locateAt` for nθ ≤ 4, θ in `point` (padded with zeros): the same tests written
   * out for four entries. The sum a_0θ_0 + a_1θ_1 + a_2θ_2 + a_3θ_3 is formed left to right, as the
   * loop forms it from 0 (0 + x = x), and a padded entry adds 0·0 = +0, which changes no sum but
   * the sign of a zero: the same comparisons, the same region.
   */
  private locate4(slack: number, violation: boolean): number {
    const th = this.point;
    const t0 = th[0];
    const t1 = th[1];
    const t2 = th[2];
    const t3 = th[3];
    const axis = this.axis;
    const split = this.split;
    const left = this.left;
    let k = 0;
    for (let a = axis[0]; a >= 0; a = axis[k]) k = left[k] + (((th[a] > split[k]) as unknown as number) | 0);
    const exactLimit = this.exactFirst ? 0 : slack;
    this.near = -1;
    this.nearV = Infinity;
    const from = this.leafFrom[k];
    const e = this.leafTo[k];
    const sl = this.slabs!;
    const at = sl.of[k];
    if (at < 0) {
      for (let q = from; q < e; q++) {
        const r = this.test4(q, t0, t1, t2, t3, slack, exactLimit, violation);
        if (r >= 0) return r;
      }
    } else {
      // only the listings whose range meets θ's slab on every axis (the others fail the pretest)
      const c = sl.scale;
      const o = 8 * at;
      const s0 = slabOf(t0, c[o], c[o + 1]);
      const s1 = slabOf(t1, c[o + 2], c[o + 3]) + SLABS;
      const s2 = slabOf(t2, c[o + 4], c[o + 5]) + 2 * SLABS;
      const s3 = slabOf(t3, c[o + 6], c[o + 7]) + 3 * SLABS;
      const M = sl.masks;
      for (let q0 = from, w = sl.base[at]; q0 < e; q0 += 32, w += 4 * SLABS) {
        let m = M[w + s0] & M[w + s1] & M[w + s2] & M[w + s3];
        while (m !== 0) {
          const low = m & -m;
          m ^= low;
          const r = this.test4(q0 + 31 - Math.clz32(low), t0, t1, t2, t3, slack, exactLimit, violation);
          if (r >= 0) return r;
        }
      }
    }
    this.lastViolation = this.near < 0 ? -Infinity : this.nearV;
    return this.near;
  }

  /** `locate4`'s best region within the slack so far (−1: none) and its largest residual */
  private near = -1;
  private nearV = Infinity;

  /**
   * Listing q of `locate4`'s leaf at θ = (t0, t1, t2, t3): its region when it holds θ within
   * `exactLimit` (the answer), else −1, keeping `near` up to date (the region with the least largest
   * residual within the slack, the first among equals).
   */
  private test4(q: number, t0: number, t1: number, t2: number, t3: number, slack: number, exactLimit: number, violation: boolean): number {
    const box = this.box4!;
    const o = q * 8;
    if (t0 < box[o] || t0 > box[o + 1] || t1 < box[o + 2] || t1 > box[o + 3] || t2 < box[o + 4] || t2 > box[o + 5] || t3 < box[o + 6] || t3 > box[o + 7]) return -1;
    const A = this.A4!;
    const rowIds = this.rowIds;
    let v = -Infinity;
    for (let p = this.rowAt[q], pe = this.rowAt[q + 1]; p < pe; p++) {
      const w = rowIds[p] * 5;
      const x = A[w] * t0 + A[w + 1] * t1 + A[w + 2] * t2 + A[w + 3] * t3 - A[w + 4];
      if (!(x <= slack)) {
        v = x;
        break;
      }
      if (x > v) v = x;
    }
    if (v <= exactLimit) {
      const r = this.leafIds[q];
      this.lastViolation = violation ? packedViolation(this.A, this.b, this.rowStart, this.n, r, this.point, slack) : v;
      return r;
    }
    if (v <= slack && v < this.nearV) {
      this.near = this.leafIds[q];
      this.nearV = v;
    }
    return -1;
  }

  /** `locateAt` testing every row of every listed region (any θ, any slack). */
  private locateFull(values: Float64Array, offset: number, slack: number): number {
    const n = this.n;
    const axis = this.axis;
    const split = this.split;
    const left = this.left;
    const right = this.right;
    let k = 0;
    for (let a = axis[0]; a >= 0; a = axis[k]) k = values[offset + a] <= split[k] ? left[k] : right[k];
    const ids = this.leafIds;
    const A = this.A;
    const b = this.b;
    const rowStart = this.rowStart;
    const boxLo = this.boxLo;
    const boxHi = this.boxHi;
    const exactLimit = this.exactFirst ? (slack < 0 ? slack : 0) : slack;
    let near = -1;
    let nearV = Infinity;
    for (let q = this.leafFrom[k], e = this.leafTo[k]; q < e; q++) {
      const r = ids[q];
      // outside the padded box, the region is not within the slack either (the premise of the listing)
      let out = false;
      for (let j = 0; j < n; j++) {
        const x = values[offset + j];
        if (x < boxLo[r * n + j] || x > boxHi[r * n + j]) {
          out = true;
          break;
        }
      }
      if (out) continue;
      // the residual test of packedViolation, inlined: Σ a_j θ_j first, then − b; stop at the first row above the slack
      let v = -Infinity;
      for (let i = rowStart[r], ie = rowStart[r + 1]; i < ie; i++) {
        let s = 0;
        const o = i * n;
        for (let j = 0; j < n; j++) s += A[o + j] * values[offset + j];
        const x = s - b[i];
        if (!(x <= slack)) {
          v = Number.isNaN(x) ? Infinity : x;
          break;
        }
        if (x > v) v = x;
      }
      if (v <= exactLimit) {
        this.lastViolation = v;
        return r;
      }
      if (v <= slack && v < nearV) {
        near = r;
        nearV = v;
      }
    }
    this.lastViolation = near < 0 ? -Infinity : nearV;
    return near;
  }
}

/**
 * The leaf listings of a build, in typed arrays grown by doubling: listing q is region ids[q], its
 * rows rowIds[rowAt[q] … rowAt[q + 1]) and (`small`, nθ ≤ 4) its range lbox[8q … 8q + 7].
 */
class Listings {
  ids = new Int32Array(1024);
  rowAt = new Int32Array(1025);
  rowIds = new Int32Array(4096);
  lbox: Float64Array;
  count = 0;
  nRows = 0;
  constructor(readonly small: boolean) {
    this.lbox = new Float64Array(small ? 8 * 1024 : 0);
  }
  /** room for one more listing of up to `rows` rows */
  reserve(rows: number): void {
    // room: ids[count], rowAt[count + 1], lbox[8·count … 8·count + 7]
    if (this.count + 1 > this.ids.length) {
      const cap = 2 * this.ids.length;
      const ids = new Int32Array(cap);
      ids.set(this.ids);
      this.ids = ids;
      const at = new Int32Array(cap + 1);
      at.set(this.rowAt);
      this.rowAt = at;
      if (this.small) {
        const box = new Float64Array(8 * cap);
        box.set(this.lbox);
        this.lbox = box;
      }
    }
    if (this.nRows + rows > this.rowIds.length) {
      const grown = new Int32Array(2 * this.rowIds.length + rows);
      grown.set(this.rowIds);
      this.rowIds = grown;
    }
  }
}

/** Regions' rows packed: A row-major (nθ columns), b, and region r's rows rowStart[r] … rowStart[r + 1]. */
export interface PackedRows {
  A: Float64Array;
  b: Float64Array;
  rowStart: Int32Array;
}

/** The regions' rows packed (`PackedRows`). */
function packRows(regions: ArrayLike<{ A: ArrayLike<ArrayLike<number>>; b: ArrayLike<number> }>, n: number): PackedRows {
  const R = regions.length;
  let rows = 0;
  for (let r = 0; r < R; r++) rows += regions[r].b.length;
  const Af = new Float64Array(rows * n);
  const bf = new Float64Array(rows);
  const rowStart = new Int32Array(R + 1);
  let at = 0;
  for (let r = 0; r < R; r++) {
    const { A, b } = regions[r];
    rowStart[r] = at;
    for (let i = 0; i < b.length; i++, at++) {
      const row = A[i];
      for (let j = 0; j < n; j++) Af[at * n + j] = row[j];
      bf[at] = b[i];
    }
  }
  rowStart[R] = at;
  return { A: Af, b: bf, rowStart };
}

/** The boxes widened by pad, region r's at [r·nθ … r·nθ + nθ − 1]. */
function padBoxes(boxes: ArrayLike<{ lo: ArrayLike<number>; hi: ArrayLike<number> }>, R: number, n: number, pad: number, bl: Float64Array, bh: Float64Array): void {
  for (let r = 0; r < R; r++) {
    const { lo, hi } = boxes[r];
    for (let j = 0; j < n; j++) {
      bl[r * n + j] = lo[j] - pad;
      bh[r * n + j] = hi[j] + pad;
    }
  }
}

/** Each row's nθ ≤ 4 entries (zeros after them) and b at stride 5 (`locate4`). */
function rowsAt5(A: Float64Array, b: Float64Array, n: number): Float64Array {
  const rows = b.length;
  const A4 = new Float64Array(rows * 5);
  for (let i = 0; i < rows; i++) {
    for (let j = 0; j < n; j++) A4[i * 5 + j] = A[i * n + j];
    A4[i * 5 + 4] = b[i];
  }
  return A4;
}

/** Expected tests of a cell for uniformly spread queries: its regions × its share of the parameter box (`span`: the box's widths). */
function cellWeight(lo: Float64Array, hi: Float64Array, m: number, span: Float64Array): number {
  let v = m;
  for (let j = 0; j < lo.length; j++) v *= (hi[j] - lo[j]) / span[j];
  return v;
}

/**
 * Keep, in order, the regions of items[0 … m) whose range (eLo, eHi, compacted alike) is not empty
 * and meets the cell [lo, hi] widened by pad on every axis; their ids go to `out`. Returns how many.
 */
function keepMeeting(items: Int32Array, m: number, n: number, lo: Float64Array, hi: Float64Array, pad: number, eLo: Float64Array, eHi: Float64Array, out: Int32Array): number {
  let kept = 0;
  for (let q = 0; q < m; q++) {
    let meets = true;
    for (let j = 0; j < n && meets; j++) meets = eLo[q * n + j] <= eHi[q * n + j] && eLo[q * n + j] <= hi[j] + pad && eHi[q * n + j] >= lo[j] - pad;
    if (!meets) continue;
    for (let j = 0; j < n; j++) {
      eLo[kept * n + j] = eLo[q * n + j];
      eHi[kept * n + j] = eHi[q * n + j];
    }
    out[kept++] = items[q];
  }
  return kept;
}

/** How many regions `splitSides` put on the right (its return is the left count). */
let rightCount = 0;

/**
 * The regions of items[0 … m) whose range reaches θ_ax ≤ s to sides[0 …) and those reaching θ_ax ≥ s
 * to sides[R …) (R = sides.length / 2), in order; returns the left count, the right one in `rightCount`.
 */
function splitSides(items: Int32Array, m: number, n: number, ax: number, s: number, eLo: Float64Array, eHi: Float64Array, sides: Int32Array): number {
  const R = sides.length >> 1;
  let nl = 0;
  let nr = 0;
  for (let q = 0; q < m; q++) {
    if (eLo[q * n + ax] <= s) sides[nl++] = items[q];
    if (eHi[q * n + ax] >= s) sides[R + nr++] = items[q];
  }
  rightCount = nr;
  return nl;
}

/**
 * What growing a tree (or a part of one) reads: the regions' packed rows, their padded boxes, the
 * parameter box and the build options. Plain numbers and typed arrays, so that a worker thread can
 * be sent it (`growPart`).
 */
export interface TreeContext {
  n: number;
  A: Float64Array;
  b: Float64Array;
  rowStart: Int32Array;
  /** padded boxes, region r's at [r·nθ … r·nθ + nθ − 1] */
  bl: Float64Array;
  bh: Float64Array;
  lower: Float64Array;
  upper: Float64Array;
  leafSize: number;
  maxDepth: number;
}

/** A cell left to grow on its own (`TreePlan.parts`): bounds, regions (ascending), depth and listing budget. */
export interface TreePart {
  lo: Float64Array;
  hi: Float64Array;
  items: Int32Array;
  depth: number;
  budget: number;
}

/**
 * A grown tree or subtree: node k has axis[k] (−1 for a leaf), split[k], children left[k] and
 * right[k] = left[k] + 1 (node 0 is the root), a leaf's listings leafFrom[k] … leafTo[k]; listing q
 * is region ids[q], its rows rowIds[rowAt[q] … rowAt[q + 1]) and (nθ ≤ 4) its range lbox[8q … 8q + 7].
 */
export interface GrownTree {
  axis: Int32Array;
  split: Float64Array;
  left: Int32Array;
  right: Int32Array;
  leafFrom: Int32Array;
  leafTo: Int32Array;
  ids: Int32Array;
  rowAt: Int32Array;
  rowIds: Int32Array;
  lbox: Float64Array;
  leaves: number;
  depth: number;
  longest: number;
  /** the grower's scratch cell after its last `cellBounds` (lo, hi, terms: kept in the index's state as before) */
  scratch: Float64Array;
}

/**
 * A build in two steps (`planTree`, `growPart`, `joinTree`): the top of the tree grown until
 * `parts` cells are pending, then each pending cell grown on its own (in any thread, in any order)
 * with a share of the listing budget, then the subtrees joined under the top.
 */
export interface TreePlan {
  ctx: TreeContext;
  size: number;
  exactFirst: boolean;
  top: GrownTree;
  /** the top's node each part's subtree goes to */
  nodes: Int32Array;
  parts: TreePart[];
}

/** Slabs per axis of a leaf's cell (`leafSlabs`). */
const SLABS = 16;
/** Leaves listing at most this many regions are scanned without slab masks. */
const SLAB_MIN = 4;

/**
 * θ's slab on one axis of a leaf: ⌊(x − c0)·scale⌋ clamped to [0, SLABS − 1] (NaN to 0). Each step is
 * monotone in x under rounding, so x ∈ [lo, hi] gives a slab in [slab(lo), slab(hi)] whatever c0 and
 * scale are: the masks need no margin.
 */
function slabOf(x: number, c0: number, scale: number): number {
  const v = (x - c0) * scale;
  return v >= SLABS - 1 ? SLABS - 1 : v >= 0 ? v | 0 : 0;
}

/**
 * Per leaf listing more than SLAB_MIN regions (nθ ≤ 4): its cell cut in SLABS slabs on every axis and,
 * per 32 listings and axis and slab, a bit mask of the listings whose range (box4) reaches the slab;
 * `locate4` tests only the listings set in the masks of θ's slabs (AND over the axes), in ascending
 * order: the same listings pass the pretest, so the same region answers. `of[node]`: the leaf's
 * record (−1: none), `scale[8r …]`: (c0, scale) per axis, `base[r]`: its first mask word, the words
 * of listings 32w … 32w + 31 at base + 4·SLABS·w, axis j's slab s at + j·SLABS + s.
 */
interface LeafSlabs {
  of: Int32Array;
  scale: Float64Array;
  base: Int32Array;
  masks: Int32Array;
}

function leafSlabs(axis: Int32Array, split: Float64Array, left: Int32Array, leafFrom: Int32Array, leafTo: Int32Array, box4: Float64Array, rootLo: Float64Array, rootHi: Float64Array): LeafSlabs {
  const nodes = axis.length;
  const n = rootLo.length;
  const of = new Int32Array(nodes).fill(-1);
  // the leaves' cells, from the root down (children follow their parent: left[k] > k)
  const lo = new Float64Array(nodes * 4);
  const hi = new Float64Array(nodes * 4);
  for (let j = 0; j < 4; j++) {
    lo[j] = j < n ? rootLo[j] : 0;
    hi[j] = j < n ? rootHi[j] : 0;
  }
  let records = 0;
  let words = 0;
  for (let k = 0; k < nodes; k++) {
    const a = axis[k];
    if (a >= 0) {
      const L = left[k];
      for (let c = L; c <= L + 1; c++)
        for (let j = 0; j < 4; j++) {
          lo[c * 4 + j] = lo[k * 4 + j];
          hi[c * 4 + j] = hi[k * 4 + j];
        }
      hi[L * 4 + a] = split[k];
      lo[(L + 1) * 4 + a] = split[k];
    } else if (leafTo[k] - leafFrom[k] > SLAB_MIN) {
      of[k] = records++;
      words += Math.ceil((leafTo[k] - leafFrom[k]) / 32) * 4 * SLABS;
    }
  }
  const scale = new Float64Array(8 * records);
  const base = new Int32Array(records);
  const masks = new Int32Array(words);
  let w = 0;
  for (let k = 0; k < nodes; k++) {
    const r = of[k];
    if (r < 0) continue;
    base[r] = w;
    for (let j = 0; j < 4; j++) {
      const width = hi[k * 4 + j] - lo[k * 4 + j];
      scale[8 * r + 2 * j] = lo[k * 4 + j];
      scale[8 * r + 2 * j + 1] = width > 0 && width < Infinity ? SLABS / width : 0;
    }
    for (let q = leafFrom[k]; q < leafTo[k]; q++) {
      const i = q - leafFrom[k];
      const word = w + (i >> 5) * 4 * SLABS;
      const bit = 1 << (i & 31);
      for (let j = 0; j < 4; j++) {
        const a = box4[8 * q + 2 * j];
        const b = box4[8 * q + 2 * j + 1];
        const c0 = scale[8 * r + 2 * j];
        const sc = scale[8 * r + 2 * j + 1];
        // a NaN side reaches every slab
        const first = a >= -Infinity ? slabOf(a, c0, sc) : 0;
        const last = b <= Infinity ? slabOf(b, c0, sc) : SLABS - 1;
        for (let s = first; s <= last; s++) masks[word + j * SLABS + s] |= bit;
      }
    }
    w += Math.ceil((leafTo[k] - leafFrom[k]) / 32) * 4 * SLABS;
  }
  return { of, scale, base, masks };
}

/** A cell of the build waiting in the queue: its node, bounds, regions (ascending) and depth. */
interface BuildJob {
  node: number;
  lo: Float64Array;
  hi: Float64Array;
  items: Int32Array;
  depth: number;
}

/**
 * Grows a k-d tree over the regions of a `TreeContext` (`grow`): the cell with the most expected
 * tests first (regions listed × share of the box volume, for uniformly spread queries), so that the
 * listing budget goes where queries spend time. One grower may grow several parts one after another.
 */
class TreeGrower {
  private readonly n: number;
  private readonly A: Float64Array;
  private readonly b: Float64Array;
  private readonly rowStart: Int32Array;
  private readonly bl: Float64Array;
  private readonly bh: Float64Array;
  private readonly pad = 1e3 * tol.inside;
  private readonly rowSize: Float64Array;
  private readonly span: Float64Array;
  private readonly cellLo: Float64Array;
  private readonly cellHi: Float64Array;
  private readonly terms: Float64Array;
  private readonly lows: Float64Array;
  private readonly highs: Float64Array;
  private readonly effLo: Float64Array;
  private readonly effHi: Float64Array;
  private readonly leafLo: Float64Array;
  private readonly leafHi: Float64Array;
  private readonly scratchItems: Int32Array;
  private readonly sides: Int32Array;
  private readonly clip: Float64Array;

  constructor(private readonly ctx: TreeContext) {
    const n = ctx.n;
    const R = ctx.rowStart.length - 1;
    this.n = n;
    this.A = ctx.A;
    this.b = ctx.b;
    this.rowStart = ctx.rowStart;
    this.bl = ctx.bl;
    this.bh = ctx.bh;
    this.cellLo = new Float64Array(n);
    this.cellHi = new Float64Array(n);
    this.terms = new Float64Array(n);
    this.rowSize = this.rowSizes(ctx.lower, ctx.upper);
    this.span = new Float64Array(n);
    for (let j = 0; j < n; j++) this.span[j] = Math.max(ctx.upper[j] - ctx.lower[j], 1e-300);
    this.lows = new Float64Array(R);
    this.highs = new Float64Array(R);
    this.effLo = new Float64Array(R * n);
    this.effHi = new Float64Array(R * n);
    this.leafLo = new Float64Array(R * n);
    this.leafHi = new Float64Array(R * n);
    this.scratchItems = new Int32Array(R);
    this.sides = new Int32Array(2 * R);
    this.clip = new Float64Array(2 * n);
  }

  /**
   * Grow the tree of the cell `root` (its node 0) within `budget` listings. With `stopAt`, stop
   * once that many cells are waiting: they are returned (`pending`, in the queue's order, their
   * nodes leaves of the tree so far) with the listings the tree would have were they leaves.
   */
  grow(root: { lo: Float64Array; hi: Float64Array; items: Int32Array; depth: number }, budget: number, stopAt = Infinity): { tree: GrownTree; pending: (BuildJob & { weight: number })[]; listed: number } {
    const n = this.n;
    const { leafSize, maxDepth } = this.ctx;
    const pad = this.pad;
    const bl = this.bl;
    const bh = this.bh;
    const span = this.span;
    const axis: number[] = [];
    const split: number[] = [];
    const left: number[] = [];
    const right: number[] = [];
    const leafFrom: number[] = [];
    const leafTo: number[] = [];
    const newNode = (): number => {
      axis.push(-1);
      split.push(0);
      left.push(-1);
      right.push(-1);
      leafFrom.push(0);
      leafTo.push(0);
      return axis.length - 1;
    };
    const queue = new LargestFirst<BuildJob & { weight: number }>();
    const R0 = root.items.length;
    queue.push(R0, { node: newNode(), lo: root.lo, hi: root.hi, items: root.items, depth: root.depth, weight: R0 });
    let listed = R0; // listings if every job left now became a leaf
    let depthMax = 0;
    let longest = 0;
    let leaves = 0;
    // per listing: the cell's rows (and, for nθ ≤ 4, the listing's range), in typed arrays grown by doubling
    const out = new Listings(n <= 4);
    const makeLeaf = (job: BuildJob): void => {
      leafFrom[job.node] = out.count;
      this.listLeaf(job, out);
      leafTo[job.node] = out.count;
      leaves++;
      depthMax = Math.max(depthMax, job.depth);
      longest = Math.max(longest, leafTo[job.node] - leafFrom[job.node]);
    };
    const effLo = this.effLo;
    const effHi = this.effHi;
    const sides = this.sides;
    const half = sides.length >> 1;
    const pending: (BuildJob & { weight: number })[] = [];
    while (queue.size) {
      if (queue.size >= stopAt) {
        while (queue.size) pending.push(queue.pop());
        break;
      }
      const job = queue.pop();
      const m = job.items.length;
      // once the listings reach the budget no split can pay for its copies: leaf without the search
      if (m <= leafSize || job.depth >= maxDepth || listed >= budget) {
        makeLeaf(job);
        continue;
      }
      // each region's range on every axis within this cell, as its rows allow (cellBounds); a region
      // whose range is empty on some axis holds no θ of the (padded) cell within the slack: dropped
      this.cellBounds(job.items, m, job.lo, job.hi, pad, effLo, effHi);
      const kept = keepMeeting(job.items, m, n, job.lo, job.hi, pad, effLo, effHi, this.scratchItems);
      listed -= m - kept;
      if (kept < m) {
        job.items = this.scratchItems.slice(0, kept);
        if (kept <= leafSize) {
          makeLeaf(job);
          continue;
        }
      }
      // the split with the fewest expected tests (bestSplit)
      const ax = this.bestSplit(kept, job.lo, job.hi, effLo, effHi, this.lows, this.highs);
      const s = this.splitAt;
      // a region is listed on a side its range reaches (a row keeps it out of the other side)
      const nl = splitSides(job.items, kept, n, ax, s, effLo, effHi, sides);
      const nr = rightCount;
      const grow = nl + nr - kept;
      // a split that separates nothing is not worth a node; the budget bounds the copies
      if ((nl === kept && nr === kept) || listed + grow > budget) {
        makeLeaf(job);
        continue;
      }
      listed += grow;
      const lHi = Float64Array.from(job.hi);
      lHi[ax] = s;
      const rLo = Float64Array.from(job.lo);
      rLo[ax] = s;
      const node = job.node;
      axis[node] = ax;
      split[node] = s;
      // the right child is always the left one + 1 (the fast descent relies on it)
      const L = newNode();
      const Rn = newNode();
      left[node] = L;
      right[node] = Rn;
      const wl = cellWeight(job.lo, lHi, nl, span);
      const wr = cellWeight(rLo, job.hi, nr, span);
      queue.push(wl, { node: L, lo: job.lo, hi: lHi, items: sides.slice(0, nl), depth: job.depth + 1, weight: wl });
      queue.push(wr, { node: Rn, lo: rLo, hi: job.hi, items: sides.slice(half, half + nr), depth: job.depth + 1, weight: wr });
    }
    const scratch = new Float64Array(3 * n);
    scratch.set(this.cellLo, 0);
    scratch.set(this.cellHi, n);
    scratch.set(this.terms, 2 * n);
    const tree: GrownTree = {
      axis: Int32Array.from(axis),
      split: Float64Array.from(split),
      left: Int32Array.from(left),
      right: Int32Array.from(right),
      leafFrom: Int32Array.from(leafFrom),
      leafTo: Int32Array.from(leafTo),
      ids: out.ids.slice(0, out.count),
      rowAt: out.rowAt.slice(0, out.count + 1),
      rowIds: out.rowIds.slice(0, out.nRows),
      lbox: out.lbox.slice(0, 8 * out.count),
      leaves,
      depth: depthMax,
      longest,
      scratch,
    };
    return { tree, pending, listed };
  }

  /**
   * The listings of the leaf `job` appended to `out`: each region of the cell that no row keeps out
   * of it (nθ ≤ 4: its range within the cell by `cellBounds`, kept for the pretest), with the rows
   * the fast path must test there (`cellRows`).
   */
  private listLeaf(job: BuildJob, out: Listings): void {
    const n = this.n;
    const pad = this.pad;
    const rowSize = this.rowSize;
    const leafLo = this.leafLo;
    const leafHi = this.leafHi;
    const clip = this.clip;
    const m = job.items.length;
    const small = out.small;
    const lo = job.lo;
    const hi = job.hi;
    if (small) this.cellBounds(job.items, m, lo, hi, pad, leafLo, leafHi);
    const clipLo = clip.subarray(0, n);
    const clipHi = clip.subarray(n, 2 * n);
    for (let q = 0; q < m; q++) {
      const r = job.items[q];
      const rows = this.rowStart[r + 1] - this.rowStart[r];
      if (small) {
        // a row keeps the region out of the whole (padded) cell: not listed
        let meets = true;
        for (let j = 0; j < n && meets; j++) meets = leafLo[q * n + j] <= leafHi[q * n + j] && leafLo[q * n + j] <= hi[j] + pad && leafHi[q * n + j] >= lo[j] - pad;
        if (!meets) continue;
        out.reserve(rows);
        const lbox = out.lbox;
        const o = 8 * out.count;
        for (let j = 0; j < 4; j++) {
          lbox[o + 2 * j] = j < n ? leafLo[q * n + j] : -Infinity;
          lbox[o + 2 * j + 1] = j < n ? leafHi[q * n + j] : Infinity;
        }
        // θ that reaches the rows passed the pretest: it lies in the cell and in the listing's
        // range, so a row holding on their intersection need not be computed (when they do not
        // meet, within pad, no θ of the cell passes the pretest and the rows are never read)
        for (let j = 0; j < n; j++) {
          clipLo[j] = Math.max(lo[j], leafLo[q * n + j]);
          clipHi[j] = Math.min(hi[j], leafHi[q * n + j]);
        }
        out.nRows = this.cellRows(r, clipLo, clipHi, rowSize, out.rowIds, out.nRows);
      } else {
        out.reserve(rows);
        out.nRows = this.cellRows(r, lo, hi, rowSize, out.rowIds, out.nRows);
      }
      out.ids[out.count] = r;
      out.rowAt[++out.count] = out.nRows;
    }
  }

  /**
   * For the cell [lo0, hi0] listing items[0 … m): per listed region q and axis j, the range
   * [eLo, eHi][q·nθ + j] of θ_j over which the region can meet the cell within the slack: its
   * padded box clipped by every row, the row's other terms at their least over the cell widened by
   * `pad` (one step of interval bound tightening): row i at θ in the cell with a_i·θ ≤ b_i + pad
   * gives a_ij θ_j ≤ b_i + pad − Σ_{k≠j} min a_ik θ_k. The sum's rounding is paid (4(nθ+2)·2⁻⁵³
   * times the sum of the magnitudes) and the quotient's (one ulp), so the range holds every such θ;
   * the query slack (≤ 100·tol.inside) and its residual's rounding fit in pad = 1000·tol.inside
   * for θ in the parameter box. A child cell θ_j ≤ s lists the region only when s ≥ eLo (likewise
   * θ_j ≥ s when s ≤ eHi), a region whose range is empty on some axis is not listed, and the ranges
   * are what the split search counts: thin oblique regions have boxes across most of the parameter
   * box, their ranges in a small cell are small.
   */
  private cellBounds(items: Int32Array, m: number, lo0: Float64Array, hi0: Float64Array, pad: number, eLo: Float64Array, eHi: Float64Array): void {
    const n = this.n;
    const bl = this.bl;
    const bh = this.bh;
    const A = this.A;
    const b = this.b;
    const L = this.cellLo;
    const H = this.cellHi;
    const t = this.terms;
    for (let j = 0; j < n; j++) {
      L[j] = lo0[j] - pad;
      H[j] = hi0[j] + pad;
    }
    const eps = 4 * (n + 2) * 2 ** -53;
    for (let q = 0; q < m; q++) {
      const r = items[q];
      const o = q * n;
      for (let j = 0; j < n; j++) {
        eLo[o + j] = bl[r * n + j];
        eHi[o + j] = bh[r * n + j];
      }
      for (let i = this.rowStart[r], e = this.rowStart[r + 1]; i < e; i++) {
        const w = i * n;
        let sum = 0;
        let size = Math.abs(b[i]) + pad;
        for (let j = 0; j < n; j++) {
          const a = A[w + j];
          const x = a > 0 ? a * L[j] : a * H[j];
          t[j] = x;
          sum += x;
          size += Math.abs(x);
        }
        const top = b[i] + pad + eps * size;
        for (let j = 0; j < n; j++) {
          const a = A[w + j];
          if (a === 0) continue;
          const v = (top - (sum - t[j])) / a;
          const ulp = Math.abs(v) * 2 ** -52;
          if (a > 0) {
            if (v + ulp < eHi[o + j]) eHi[o + j] = v + ulp;
          } else if (v - ulp > eLo[o + j]) eLo[o + j] = v - ulp;
        }
      }
    }
  }

  /** set by `bestSplit`: the split value of the axis it returns */
  private splitAt = 0;

  /**
   * The split of the cell [lo0, hi0] listing items[0 … m) with the fewest expected region tests:
   * Σ over the two sides of (side's share of the cell) × (boxes reaching it), over the box sides
   * inside the cell on every axis (a sweep over the sorted sides) and the cell's ¼, ½, ¾ points (the
   * eighths only for cells listing more than SWEEP_MAX). Returns the axis; the value is left in
   * `splitAt`. A method of its own (not a loop of the constructor) so that it is compiled early.
   */
  private bestSplit(m: number, lo0: Float64Array, hi0: Float64Array, bl: Float64Array, bh: Float64Array, lows: Float64Array, highs: Float64Array): number {
    const n = this.n;
    let ax = 0;
    let s = 0.5 * (lo0[0] + hi0[0]);
    let best = Infinity;
    for (let j = 0; j < n; j++) {
      const c0 = lo0[j];
      const w = hi0[j] - c0;
      if (!(w > 0)) continue;
      if (m > SWEEP_MAX) {
        // a large cell (near the root, regions spread out): the cell's eighths, counted in one pass
        for (const f of EIGHTHS) {
          const at = c0 + f * w;
          let nl = 0;
          let nr = 0;
          for (let q = 0; q < m; q++) {
            if (bl[q * n + j] <= at) nl++;
            if (bh[q * n + j] >= at) nr++;
          }
          const cost = f * nl + (1 - f) * nr;
          if (cost < best) {
            best = cost;
            ax = j;
            s = at;
          }
        }
        continue;
      }
      // sides: lows ascending (a box reaches the left side of x when its low ≤ x), highs ascending
      for (let q = 0; q < m; q++) {
        lows[q] = bl[q * n + j];
        highs[q] = bh[q * n + j];
      }
      const lo = lows.subarray(0, m).sort();
      const hi = highs.subarray(0, m).sort();
      const tryAt = (at: number, nl: number, nr: number): void => {
        if (!(at > c0 && at < c0 + w)) return;
        const f = (at - c0) / w;
        const cost = f * nl + (1 - f) * nr;
        if (cost < best) {
          best = cost;
          ax = j;
          s = at;
        }
      };
      // nl(x) = #lows ≤ x, nr(x) = #highs ≥ x; candidates: every low and every high
      let il = 0;
      let ih = 0;
      for (let q = 0; q < 2 * m; q++) {
        const takeLow = il < m && (ih >= m || lo[il] <= hi[ih]);
        const at = takeLow ? lo[il] : hi[ih];
        while (il < m && lo[il] <= at) il++;
        // at a high side: the box ending here still reaches x = at, so count highs ≥ at
        let k = ih;
        while (k < m && hi[k] < at) k++;
        ih = k;
        tryAt(at, il, m - ih);
        if (il >= m && ih >= m) break;
        if (!takeLow) ih++;
      }
      for (const f of SPLITS) {
        const at = c0 + f * w;
        let nl = 0;
        let nr = 0;
        for (let q = 0; q < m; q++) {
          if (lo[q] <= at) nl++;
          if (hi[q] >= at) nr++;
        }
        tryAt(at, nl, nr);
      }
    }
    this.splitAt = s;
    return ax;
  }
  /**
   * Writes into `out` from `at` (returns the new end) the rows of region r that the fast path must
   * test for θ in the cell [lo, hi]:
   * every row but those whose residual, as `locateAt` computes it (fl(Σ a_j θ_j) − b), is ≤ 0 at
   * every θ of the cell. A row with one nonzero entry is left out when fl(a_j·x_j) ≤ b at the cell's
   * far end x_j (rounding is monotone and the zeros add nothing); another when the cell's maximum of
   * Σ a_j θ_j computed in double, plus 4(nθ+1)·2⁻⁵³·Σ|a_j|·max(|lo_j|, |hi_j|) over the parameter
   * box (`rowSizes`; twice the bound on the rounding of the sum, once for the maximum and once at θ),
   * is ≤ b. So for any slack ≥ 0, a
   * region's largest residual over the rows kept decides "≤ 0", "≤ slack" and "least" as over all
   * its rows (a residual left out is ≤ 0: it matters only once every row is ≤ 0, where θ is held
   * exactly whatever its value).
   */
  private cellRows(r: number, lo: Float64Array, hi: Float64Array, size: Float64Array, out: Int32Array, at: number): number {
    const n = this.n;
    const A = this.A;
    const u = 4 * (n + 1) * 2 ** -53;
    for (let i = this.rowStart[r], e = this.rowStart[r + 1]; i < e; i++) {
      let mx = 0;
      for (let j = 0; j < n; j++) {
        const a = A[i * n + j];
        mx += a > 0 ? a * hi[j] : a * lo[j];
      }
      // size < 0 marks a row with one nonzero entry
      const holds = size[i] < 0 ? mx <= this.b[i] : mx + u * size[i] <= this.b[i];
      if (!holds) out[at++] = i;
    }
    return at;
  }

  /**
   * Per row: Σ_j |a_j|·max(|lower_j|, |upper_j|) over the parameter box (at least the cell's, which
   * lies in it), or −1 for a row with at most one nonzero entry (`cellRows`).
   */
  private rowSizes(lower: ArrayLike<number>, upper: ArrayLike<number>): Float64Array {
    const n = this.n;
    const rows = this.b.length;
    const size = new Float64Array(rows);
    for (let i = 0; i < rows; i++) {
      let sz = 0;
      let nonzero = 0;
      for (let j = 0; j < n; j++) {
        const a = this.A[i * n + j];
        if (a !== 0) nonzero++;
        sz += Math.abs(a) * Math.max(Math.abs(lower[j]), Math.abs(upper[j]));
      }
      size[i] = nonzero <= 1 ? -1 : sz;
    }
    return size;
  }
}

/** The regions' rows packed and their boxes padded, with the build options: what `TreeGrower` reads. */
function treeContext(regions: ArrayLike<{ A: ArrayLike<ArrayLike<number>>; b: ArrayLike<number> }>, boxes: ArrayLike<{ lo: ArrayLike<number>; hi: ArrayLike<number> }>, lower: ArrayLike<number>, upper: ArrayLike<number>, options: BoxIndexOptions, packed?: PackedRows): TreeContext {
  const n = lower.length;
  const R = regions.length;
  const { A, b, rowStart } = packed ?? packRows(regions, n);
  const bl = new Float64Array(R * n);
  const bh = new Float64Array(R * n);
  padBoxes(boxes, R, n, 1e3 * tol.inside, bl, bh);
  return { n, A, b, rowStart, bl, bh, lower: Float64Array.from(lower), upper: Float64Array.from(upper), leafSize: options.leafSize ?? 3, maxDepth: options.maxDepth ?? 48 };
}

/**
 * The first step of a build in parts: the top of the tree grown until `parts` cells wait (fewer
 * when the tree ends sooner), each given the listings it holds plus a share of the budget left in
 * proportion to its expected tests. Any split of the work gives an index with the answers of a
 * build in one piece (every region holding θ is listed in θ's leaf whatever the cells). `packed`:
 * the regions' rows already packed as `packRows` packs them (e.g. the shared box job's), used as they are.
 */
export function planTree(regions: ArrayLike<{ A: ArrayLike<ArrayLike<number>>; b: ArrayLike<number> }>, boxes: ArrayLike<{ lo: ArrayLike<number>; hi: ArrayLike<number> }>, lower: ArrayLike<number>, upper: ArrayLike<number>, options: BoxIndexOptions = {}, packed?: PackedRows): TreePlan {
  const ctx = treeContext(regions, boxes, lower, upper, options, packed);
  const R = regions.length;
  const budget = (options.listingBudget ?? 24) * Math.max(R, 1);
  const all = new Int32Array(R);
  for (let r = 0; r < R; r++) all[r] = r;
  const parts = Math.max(1, options.parts ?? 1);
  const grower = new TreeGrower(ctx);
  const { tree, pending, listed } = grower.grow({ lo: Float64Array.from(lower), hi: Float64Array.from(upper), items: all, depth: 0 }, budget, parts > 1 ? parts : Infinity);
  let weights = 0;
  for (const p of pending) weights += p.weight;
  const left = Math.max(0, budget - listed);
  return {
    ctx,
    size: R,
    exactFirst: options.rule !== 'first',
    top: tree,
    nodes: Int32Array.from(pending, (p) => p.node),
    parts: pending.map((p) => ({ lo: p.lo, hi: p.hi, items: p.items, depth: p.depth, budget: p.items.length + Math.floor(weights > 0 ? (left * p.weight) / weights : left / pending.length) })),
  };
}

/** Grow one part of a plan (any thread: `ctx` and the part as plain data). `grower` may be reused for parts of the same context. */
export function growPart(ctx: TreeContext, part: TreePart, grower: { g?: TreeGrower } = {}): GrownTree {
  grower.g ??= new TreeGrower(ctx);
  return grower.g.grow(part, part.budget).tree;
}

/** The index of a plan and its parts' subtrees (grown[k] of plan.parts[k]): the subtrees hung under the top, in order. */
export function joinTree(plan: TreePlan, grown: GrownTree[]): BoxIndex {
  const { ctx, top } = plan;
  const n = ctx.n;
  let nodes = top.axis.length;
  let lists = top.ids.length;
  let rows = top.rowIds.length;
  for (const g of grown) {
    nodes += g.axis.length - 1;
    lists += g.ids.length;
    rows += g.rowIds.length;
  }
  const axis = new Int32Array(nodes);
  const split = new Float64Array(nodes);
  const left = new Int32Array(nodes);
  const right = new Int32Array(nodes);
  const leafFrom = new Int32Array(nodes);
  const leafTo = new Int32Array(nodes);
  const ids = new Int32Array(lists);
  const rowAt = new Int32Array(lists + 1);
  const rowIds = new Int32Array(rows);
  const lbox = new Float64Array(n <= 4 ? 8 * lists : 0);
  axis.set(top.axis);
  split.set(top.split);
  left.set(top.left);
  right.set(top.right);
  leafFrom.set(top.leafFrom);
  leafTo.set(top.leafTo);
  ids.set(top.ids);
  rowAt.set(top.rowAt);
  rowIds.set(top.rowIds);
  if (n <= 4) lbox.set(top.lbox);
  let at = top.axis.length;
  let q0 = top.ids.length;
  let p0 = top.rowIds.length;
  let leaves = top.leaves;
  let depth = top.depth;
  let longest = top.longest;
  let scratch = top.scratch;
  for (let k = 0; k < grown.length; k++) {
    const g = grown[k];
    // subtree node 0 is the top's pending node; node i > 0 goes to at + i − 1 (pairs stay adjacent)
    const root = plan.nodes[k];
    const map = (i: number): number => (i === 0 ? root : at + i - 1);
    for (let i = 0; i < g.axis.length; i++) {
      const t = map(i);
      axis[t] = g.axis[i];
      split[t] = g.split[i];
      left[t] = g.left[i] < 0 ? -1 : map(g.left[i]);
      right[t] = g.right[i] < 0 ? -1 : map(g.right[i]);
      leafFrom[t] = g.leafFrom[i] + q0;
      leafTo[t] = g.leafTo[i] + q0;
    }
    ids.set(g.ids, q0);
    for (let q = 1; q <= g.ids.length; q++) rowAt[q0 + q] = g.rowAt[q] + p0;
    rowIds.set(g.rowIds, p0);
    if (n <= 4) lbox.set(g.lbox, 8 * q0);
    at += g.axis.length - 1;
    q0 += g.ids.length;
    p0 += g.rowIds.length;
    leaves += g.leaves;
    depth = Math.max(depth, g.depth);
    longest = Math.max(longest, g.longest);
    scratch = g.scratch;
  }
  return BoxIndex.fromState(indexState(plan, { axis, split, left, right, leafFrom, leafTo, ids, rowAt, rowIds, lbox, leaves, depth, longest, scratch }));
}

/** The state of the index a plan and its grown tree make (`BoxIndex.fromState`). */
function indexState(plan: { ctx: TreeContext; size: number; exactFirst: boolean }, t: GrownTree): BoxIndexState {
  const { ctx } = plan;
  const n = ctx.n;
  return {
    n,
    size: plan.size,
    A: ctx.A,
    b: ctx.b,
    rowStart: ctx.rowStart,
    axis: t.axis,
    split: t.split,
    left: t.left,
    right: t.right,
    leafFrom: t.leafFrom,
    leafTo: t.leafTo,
    leafIds: t.ids,
    boxLo: ctx.bl,
    boxHi: ctx.bh,
    rowAt: t.rowAt,
    rowIds: t.rowIds,
    rootLo: Float64Array.from(ctx.lower),
    rootHi: Float64Array.from(ctx.upper),
    A4: n <= 4 ? rowsAt5(ctx.A, ctx.b, n) : null,
    box4: n <= 4 ? t.lbox : null,
    exactFirst: plan.exactFirst,
    stats: { nodes: t.axis.length, leaves: t.leaves, depth: t.depth, longestLeaf: t.longest, listings: t.ids.length, cellRows: t.rowIds.length },
    cellLo: t.scratch.slice(0, n),
    cellHi: t.scratch.slice(n, 2 * n),
    terms: t.scratch.slice(2 * n, 3 * n),
  };
}

/** A built index's state: the plan's parts (one when `options.parts` is not given) grown here one after another and joined. */
function buildState(regions: ArrayLike<{ A: ArrayLike<ArrayLike<number>>; b: ArrayLike<number> }>, boxes: ArrayLike<{ lo: ArrayLike<number>; hi: ArrayLike<number> }>, lower: ArrayLike<number>, upper: ArrayLike<number>, options: BoxIndexOptions): BoxIndexState {
  const plan = planTree(regions, boxes, lower, upper, options);
  if (plan.parts.length === 0) return indexState(plan, plan.top);
  const grower = {};
  return joinTree(
    plan,
    plan.parts.map((p) => growPart(plan.ctx, p, grower)),
  ).state();
}

/**
 * Index files (`tessera evaluate --index FILE`): a built `BoxIndex` kept on disk beside its table,
 * so a later run reads it instead of building it again (the LPs of the bounding boxes and the
 * tree's build are most of a cold run's index stage). Layout, version 1, little-endian:
 * - the line `tessera-index 1\n`;
 * - one line of JSON: `key` (what the writer says the index is for: the CLI stores the table file's
 *   SHA-256 and the locator's parameters, and rebuilds when they differ), `scalars` (the numbers,
 *   boolean and stats of `BoxIndex.state()`), `arrays` (name, element type `f64` | `i32` | `null`,
 *   length, byte offset from the start of the data);
 * - zero bytes up to a multiple of 8, then the data: each array's elements, each array starting at
 *   a multiple of 8.
 * The answers of an index read back are those of the index written (the same arrays, bit for bit).
 */
export const INDEX_FILE_TAG = 'tessera-index';
export const INDEX_FILE_VERSION = 1;

type IndexArrayType = 'f64' | 'i32' | 'null';
interface IndexFileHeader {
  key: Record<string, unknown>;
  scalars: Record<string, unknown>;
  arrays: [string, IndexArrayType, number, number][];
}

const littleEndian = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;

/** The bytes of an index file holding `index`, tagged with `key` (plain JSON data). */
export function indexToBytes(index: BoxIndex, key: Record<string, unknown>): Uint8Array {
  if (!littleEndian) throw new Error('index files are written on little-endian machines only');
  const state = index.state() as unknown as Record<string, unknown>;
  const scalars: Record<string, unknown> = {};
  const arrays: [string, IndexArrayType, number, number][] = [];
  const data: Uint8Array[] = [];
  let at = 0;
  for (const k of STATE_KEYS) {
    const v = state[k];
    if (v instanceof Float64Array || v instanceof Int32Array) {
      arrays.push([k, v instanceof Float64Array ? 'f64' : 'i32', v.length, at]);
      data.push(new Uint8Array(v.buffer, v.byteOffset, v.byteLength));
      at += Math.ceil(v.byteLength / 8) * 8;
    } else if (v === null) arrays.push([k, 'null', 0, at]);
    else if (typeof v === 'number' || typeof v === 'boolean' || (typeof v === 'object' && v !== null && !ArrayBuffer.isView(v))) scalars[k] = v;
    else throw new Error(`index state "${k}" has no file form`);
  }
  const header: IndexFileHeader = { key, scalars, arrays };
  const head = new TextEncoder().encode(`${INDEX_FILE_TAG} ${INDEX_FILE_VERSION}\n${JSON.stringify(header)}\n`);
  const start = Math.ceil(head.length / 8) * 8;
  const out = new Uint8Array(start + at);
  out.set(head);
  let o = start;
  for (const d of data) {
    out.set(d, o);
    o += Math.ceil(d.length / 8) * 8;
  }
  return out;
}

/**
 * Read an index file's bytes: `{ key, index }`, or `{ problem }` saying in a few words why these
 * bytes are not an index this build reads (`tag`: not an index file at all; `version`: an index
 * file of another version; `damaged`: cut short or malformed). The arrays are copies (aligned).
 */
export function indexFromBytes(bytes: Uint8Array): { key: Record<string, unknown>; index: BoxIndex } | { problem: 'tag' | 'version' | 'damaged'; detail: string } {
  const nl = bytes.indexOf(10);
  const tagLine = new TextDecoder().decode(bytes.subarray(0, nl < 0 ? Math.min(bytes.length, 64) : Math.min(nl, 64)));
  const m = /^tessera-index (\d+)$/.exec(tagLine);
  if (nl < 0 || !m) return { problem: 'tag', detail: `does not start with "${INDEX_FILE_TAG} ${INDEX_FILE_VERSION}"` };
  if (Number(m[1]) !== INDEX_FILE_VERSION) return { problem: 'version', detail: `index file version ${m[1]} (this build reads ${INDEX_FILE_VERSION})` };
  if (!littleEndian) return { problem: 'version', detail: 'index files are read on little-endian machines only' };
  const nl2 = bytes.indexOf(10, nl + 1);
  if (nl2 < 0) return { problem: 'damaged', detail: 'the header line is not closed' };
  let header: IndexFileHeader;
  try {
    header = JSON.parse(new TextDecoder().decode(bytes.subarray(nl + 1, nl2))) as IndexFileHeader;
  } catch {
    return { problem: 'damaged', detail: 'the header is not valid JSON' };
  }
  if (!header || typeof header.key !== 'object' || typeof header.scalars !== 'object' || !Array.isArray(header.arrays)) return { problem: 'damaged', detail: 'the header lacks key, scalars or arrays' };
  const start = Math.ceil((nl2 + 1) / 8) * 8;
  const state: Record<string, unknown> = { ...header.scalars };
  for (const entry of header.arrays) {
    const [name, type, length, offset] = entry;
    if (type === 'null') {
      state[name] = null;
      continue;
    }
    const size = type === 'f64' ? 8 : type === 'i32' ? 4 : 0;
    if (!size || !Number.isInteger(length) || !Number.isInteger(offset) || length < 0 || offset < 0 || offset % 8 !== 0) return { problem: 'damaged', detail: `array "${name}" is malformed` };
    const a = start + offset;
    if (a + length * size > bytes.length) return { problem: 'damaged', detail: `array "${name}" runs past the end of the file (cut short?)` };
    const copy = new Uint8Array(length * size);
    copy.set(bytes.subarray(a, a + length * size));
    state[name] = type === 'f64' ? new Float64Array(copy.buffer) : new Int32Array(copy.buffer);
  }
  for (const k of STATE_KEYS) if (!(k in state)) return { problem: 'damaged', detail: `"${k}" is missing` };
  const n = state.n;
  const size = state.size;
  if (!Number.isInteger(n) || !Number.isInteger(size)) return { problem: 'damaged', detail: 'n or size is not an integer' };
  // the arrays' lengths that queries rely on without checking
  const rowStart = state.rowStart as Int32Array;
  const f64 = (k: string, len: number): boolean => state[k] instanceof Float64Array && (state[k] as Float64Array).length === len;
  if (!(rowStart instanceof Int32Array) || rowStart.length !== (size as number) + 1 || !f64('boxLo', (size as number) * (n as number)) || !f64('boxHi', (size as number) * (n as number)) || !f64('rootLo', n as number) || !f64('rootHi', n as number))
    return { problem: 'damaged', detail: 'array lengths do not match the index size' };
  return { key: header.key, index: BoxIndex.fromState(state as unknown as BoxIndexState) };
}
