import { lpMaximizeFrom, chebyshevBall } from '../lp/kernel.js';
import { luSolveInPlace } from '../linalg/dense.js';
import { tol } from '../tol.js';
import type { CriticalRegion } from '../mpqp/types.js';
import { BoxIndex, type BoxIndexOptions } from './boxindex.js';
import { packedViolation } from './packed.js';

export { packedViolation };

/**
 * Point location over polyhedral regions through a hierarchy of uniform grids over the parameter
 * box (a loose multi-level grid).
 *
 * Level L splits every axis into 2^L cells. A region goes to the finest level whose cells are at
 * least as wide as its bounding box on every axis, and is listed in the (at most 2^nθ) cells of that
 * level its box meets; so inserting is O(2^nθ) whatever the table size, and a query looks at one
 * cell per level. Lists are in ascending id and a query keeps the lowest id holding θ exactly, else
 * the least residual within the slack: the same answer as a sequential scan (`locateScan`,
 * `locateSequential`), with a number of tests independent of the
 * number of regions. Regions are added one at a time in id order (the exploration does).
 *
 * Why our own and not an R-tree package: θ has 1 to ~6 dimensions here and the well-kept npm
 * spatial indexes (rbush, flatbush, kdbush) are 2-D only; a grid hierarchy over a known box is a
 * few dozen lines, needs no balancing, and answers the lowest id deterministically.
 */
export class GridLocator {
  readonly n: number;
  private readonly lo: Float64Array;
  private readonly width: Float64Array;
  private readonly maxLevel: number;
  /** per level: cell key → the cell's list (an index into `listStart`), in a typed open-addressing hash */
  private readonly levels: CellHash[] = [];
  /**
   * every listed cell's region ids (ascending), all levels: list c is pool[listStart[c] …
   * listStart[c] + listLen[c]), room for listCap[c]; a full list moves to the pool's end with twice
   * the room (the space it leaves is not reused). Typed arrays instead of an array per cell: in 4-D a
   * region is listed in up to 256 cells, and the lists were most of what the locator kept on the heap.
   */
  private pool: Int32Array = new Int32Array(1024);
  private poolUsed = 0;
  private listStart: Int32Array = new Int32Array(64);
  private listLen: Int32Array = new Int32Array(64);
  private listCap: Int32Array = new Int32Array(64);
  private listCount = 0;
  /** levels that hold a region, ascending */
  private readonly usedLevels: number[] = [];
  private readonly cellsPerAxis: number[] = [];
  /** rows of every region, flattened: region r has rows rowStart[r] … rowStart[r+1]−1 */
  private A: Float64Array;
  private b: Float64Array;
  private rowStart: number[] = [0];
  /** per region, the row that last showed a query outside it (tried first by `locate`; any order gives the same answers) */
  private lastOut = new Int32Array(64);
  /** every region's padded box in θ (lo_0 … lo_n−1, hi_0 … hi_n−1): a region whose padded box misses θ holds it nowhere exactly */
  private boxes: Float64Array;
  private count = 0;
  /** `cellTerms`' output (its first m·termW entries; scratch of one add) and its row length */
  private termScratch = new Float64Array(64);
  private termW = 0;
  /** cells of its level's grid a region's bounding box may meet (the level is the finest that keeps to this) */
  private readonly cellBudget: number;

  constructor(lower: ArrayLike<number>, upper: ArrayLike<number>, options: { cellBudget?: number } = {}) {
    // 4^nθ cells (up to 4096); from 5-D on a quarter of that: fewer listings to add, about as many
    // to test per query (mixer-5d-n10, paired: 1.04-1.08x faster; 4-D unchanged, so it keeps 4^nθ)
    this.cellBudget = options.cellBudget ?? Math.min(4096, lower.length >= 5 ? 4 ** (lower.length - 1) : 4 ** lower.length);
    this.n = lower.length;
    this.lo = Float64Array.from(lower);
    this.width = new Float64Array(this.n);
    for (let j = 0; j < this.n; j++) this.width[j] = Math.max(upper[j] - lower[j], 1e-300);
    // cell keys stay exact integers below 2^52
    this.maxLevel = Math.max(0, Math.min(20, Math.floor(52 / Math.max(this.n, 1))));
    for (let L = 0; L <= this.maxLevel; L++) {
      this.levels.push(new CellHash());
      this.cellsPerAxis.push(2 ** L);
    }
    this.A = new Float64Array(64 * Math.max(this.n, 1));
    this.b = new Float64Array(64);
    this.boxes = new Float64Array(64 * 2 * Math.max(this.n, 1));
  }

  get size(): number {
    return this.count;
  }

  /** Add region `size` (ids are dense and ascending) with rows A θ ≤ b and a bounding box that holds it. */
  add(A: ArrayLike<ArrayLike<number>>, b: ArrayLike<number>, boxLo: ArrayLike<number>, boxHi: ArrayLike<number>): number {
    const n = this.n;
    const id = this.count++;
    const start = this.rowStart[id];
    const m = b.length;
    while ((start + m) * n > this.A.length || start + m > this.b.length) {
      const g = new Float64Array(this.A.length * 2);
      g.set(this.A);
      this.A = g;
      const h = new Float64Array(this.b.length * 2);
      h.set(this.b);
      this.b = h;
    }
    for (let i = 0; i < m; i++) {
      for (let j = 0; j < n; j++) this.A[(start + i) * n + j] = A[i][j];
      this.b[start + i] = b[i];
    }
    this.rowStart.push(start + m);
    if (id >= this.lastOut.length) {
      const g = new Int32Array(this.lastOut.length * 2);
      g.set(this.lastOut);
      this.lastOut = g;
    }
    this.lastOut[id] = m > 0 ? start : -1;
    // box in unit coordinates, padded so that a query within its slack still finds the region
    const pad = 1e3 * tol.inside;
    if ((id + 1) * 2 * n > this.boxes.length) {
      const g = new Float64Array(this.boxes.length * 2);
      g.set(this.boxes);
      this.boxes = g;
    }
    for (let j = 0; j < n; j++) {
      // NaN sides (no box known on that axis) never reject
      this.boxes[id * 2 * n + j] = boxLo[j] - pad >= -Infinity ? boxLo[j] - pad : -Infinity;
      this.boxes[id * 2 * n + n + j] = boxHi[j] + pad <= Infinity ? boxHi[j] + pad : Infinity;
    }
    const u0: number[] = [];
    const u1: number[] = [];
    let ext = 0;
    for (let j = 0; j < n; j++) {
      const a = Math.max(0, Math.min(1, (boxLo[j] - pad - this.lo[j]) / this.width[j]));
      const c = Math.max(0, Math.min(1, (boxHi[j] + pad - this.lo[j]) / this.width[j]));
      u0.push(Number.isNaN(a) ? 0 : a);
      u1.push(Number.isNaN(c) ? 1 : Math.max(c, a));
      ext = Math.max(ext, u1[j] - u0[j]);
    }
    // the finest level at which the box meets at most `cellBudget` cells
    let L = ext > 0 ? Math.floor(-Math.log2(ext)) : this.maxLevel;
    L = Math.max(0, Math.min(this.maxLevel, L));
    const span = (lev: number): number => {
      const d = 2 ** lev;
      let c = 1;
      for (let j = 0; j < n; j++) c *= Math.min(d - 1, Math.floor(u1[j] * d)) - Math.min(d - 1, Math.floor(u0[j] * d)) + 1;
      return c;
    };
    while (L < this.maxLevel && span(L + 1) <= this.cellBudget) L++;
    const d = 2 ** L;
    const first: number[] = [];
    const last: number[] = [];
    for (let j = 0; j < n; j++) {
      first.push(Math.min(d - 1, Math.floor(u0[j] * d)));
      last.push(Math.min(d - 1, Math.floor(u1[j] * d)));
    }
    const cells = this.levels[L];
    if (!this.usedLevels.includes(L)) {
      this.usedLevels.push(L);
      this.usedLevels.sort((x, y) => x - y);
    }
    const idx = first.slice();
    const single = span(L) === 1;
    const terms = single ? null : this.cellTerms(start, m, first, last, d, pad);
    const rows = single ? null : this.separatingRows(terms!, start, m, first, last, pad);
    for (;;) {
      // a cell that one of the region's rows separates from it is left out
      if (single || !this.separatedBy(terms!, rows!, start, m, idx, first, last, pad)) {
        let key = 0;
        for (let j = n - 1; j >= 0; j--) key = key * d + idx[j];
        const at = cells.get(key);
        if (at >= 0) this.listPush(at, id);
        else cells.set(key, this.newList(id));
      }
      let j = 0;
      while (j < n && idx[j] === last[j]) {
        idx[j] = first[j];
        j++;
      }
      if (j === n) break;
      idx[j]++;
    }
    return id;
  }

  /** `cap` entries at the pool's end (grown by doubling); their start. */
  private poolTake(cap: number): number {
    if (this.poolUsed + cap > this.pool.length) {
      let n = this.pool.length * 2;
      while (this.poolUsed + cap > n) n *= 2;
      const g = new Int32Array(n);
      g.set(this.pool.subarray(0, this.poolUsed));
      this.pool = g;
    }
    const at = this.poolUsed;
    this.poolUsed += cap;
    return at;
  }

  /** A new cell list holding id; its index. */
  private newList(id: number): number {
    const c = this.listCount++;
    if (c === this.listStart.length) {
      const grow = (a: Int32Array): Int32Array => {
        const g = new Int32Array(2 * a.length);
        g.set(a);
        return g;
      };
      this.listStart = grow(this.listStart);
      this.listLen = grow(this.listLen);
      this.listCap = grow(this.listCap);
    }
    const at = this.poolTake(4);
    this.pool[at] = id;
    this.listStart[c] = at;
    this.listLen[c] = 1;
    this.listCap[c] = 4;
    return c;
  }

  /** Append id to cell list c. */
  private listPush(c: number, id: number): void {
    const len = this.listLen[c];
    if (len === this.listCap[c]) {
      const at = this.poolTake(2 * len);
      this.pool.copyWithin(at, this.listStart[c], this.listStart[c] + len);
      this.listStart[c] = at;
      this.listCap[c] = 2 * len;
    }
    this.pool[this.listStart[c] + len] = id;
    this.listLen[c] = len + 1;
  }

  /**
   * For each row of the region (rows start … start+m−1), axis j and cell index c of the region's
   * range on that axis (first_j … last_j), the least of a_j·θ_j over the cell's padded side: the
   * term a cell's separation test adds for that axis, formed once per region instead of once per cell. Laid out
   * row by row, the axes' ranges one after another.
   */
  private cellTerms(start: number, m: number, first: readonly number[], last: readonly number[], d: number, pad: number): Float64Array {
    const n = this.n;
    let w = 0;
    for (let j = 0; j < n; j++) w += last[j] - first[j] + 1;
    // every entry below is written before add reads it; nothing of it outlives the add
    this.termW = w;
    if (this.termScratch.length < m * w) this.termScratch = new Float64Array(2 * m * w);
    const out = this.termScratch;
    for (let i = 0; i < m; i++) {
      let o = i * w;
      for (let j = 0; j < n; j++) {
        const a = this.A[(start + i) * n + j];
        for (let c = first[j]; c <= last[j]; c++) {
          const c0 = this.lo[j] + (c / d) * this.width[j] - pad;
          const c1 = this.lo[j] + ((c + 1) / d) * this.width[j] + pad;
          out[o++] = a > 0 ? a * c0 : a * c1;
        }
      }
    }
    return out;
  }

  /**
   * The rows that may separate some cell of the region's range: a row whose sum of per-axis largest
   * `cellTerms` (axis order) is ≤ b + pad separates no cell, since rounded addition is monotone and
   * every cell's sum is formed in the same order from terms no larger. The rest, as indices; the
   * first entry is moved to the front by `separatedBy` (the last row that separated a cell).
   */
  private separatingRows(terms: Float64Array, start: number, m: number, first: readonly number[], last: readonly number[], pad: number): Int32Array {
    const n = this.n;
    const w = this.termW;
    const out = new Int32Array(m);
    let k = 0;
    for (let i = 0; i < m; i++) {
      let mx = 0;
      let o = i * w;
      for (let j = 0; j < n; j++) {
        let t = terms[o];
        for (let c = 1, e = last[j] - first[j]; c <= e; c++) if (terms[o + c] > t) t = terms[o + c];
        mx += t;
        o += last[j] - first[j] + 1;
      }
      if (mx > this.b[start + i] + pad) out[k++] = i;
    }
    return out.subarray(0, k);
  }

  /**
   * True when a row of the region holds nowhere in grid cell idx: Σ_j of its `cellTerms` (in axis
   * order, as if formed per cell) > b + pad, for one of `rows` (the only rows that can). Whether any
   * row does is independent of the order they are tried in: the row that separated last is tried
   * first (neighbouring cells are mostly cut off by the same row), by swapping it to the front.
   */
  private separatedBy(terms: Float64Array, rows: Int32Array, start: number, m: number, idx: readonly number[], first: readonly number[], last: readonly number[], pad: number): boolean {
    const n = this.n;
    const w = this.termW;
    for (let q = 0; q < rows.length; q++) {
      const i = rows[q];
      let mn = 0;
      let o = i * w;
      for (let j = 0; j < n; j++) {
        mn += terms[o + idx[j] - first[j]];
        o += last[j] - first[j] + 1;
      }
      if (mn > this.b[start + i] + pad) {
        if (q > 0) {
          rows[q] = rows[0];
          rows[0] = i;
        }
        return true;
      }
    }
    return false;
  }

  /** True when region r holds θ within slack (every row ≤ b + slack; NaN θ is in no region). */
  contains(r: number, theta: ArrayLike<number>, slack: number): boolean {
    return this.violation(r, theta, slack) <= slack;
  }

  /**
   * Largest residual max_i(a_i·θ − b_i) of region r at θ (≤ 0: θ inside exactly); the scan stops
   * at the first row above `limit` and returns that row's residual. NaN θ gives +Infinity; a region
   * without rows gives −Infinity.
   */
  violation(r: number, theta: ArrayLike<number>, limit: number = Infinity): number {
    return packedViolation(this.A, this.b, this.rowStart, this.n, r, theta, limit);
  }

  /**
   * `violation(r, θ, limit)` for `locate`, whose every use of the value is a test against the limit:
   * the row that last put a query outside region r is tried first, and when its residual is above
   * the limit that residual is returned (another row's than the scan's first, above the limit too:
   * the same decisions); otherwise the scan in row order, the same value bit for bit. Neighbouring
   * queries are mostly cut off by the same row, so a region that does not hold θ costs one row.
   */
  private residual(r: number, theta: ArrayLike<number>, limit: number): number {
    const n = this.n;
    const A = this.A;
    const i = this.lastOut[r];
    if (i >= 0) {
      let s = 0;
      const o = i * n;
      for (let j = 0; j < n; j++) s += A[o + j] * theta[j];
      const v = s - this.b[i];
      if (v > limit) return v;
    }
    let worst = -Infinity;
    for (let q = this.rowStart[r], e = this.rowStart[r + 1]; q < e; q++) {
      let t = 0;
      const p = q * n;
      for (let j = 0; j < n; j++) t += A[p + j] * theta[j];
      const w = t - this.b[q];
      if (!(w <= limit)) {
        this.lastOut[r] = q;
        return Number.isNaN(w) ? Infinity : w;
      }
      if (w > worst) worst = w;
    }
    return worst;
  }

  /** Largest residual of the region the last `locate` returned (−Infinity when it returned −1). */
  lastViolation = -Infinity;

  /**
   * The region holding θ, or −1. A region that holds θ exactly (every row ≤ b) wins, the lowest id
   * among them; only when none does, the region within `slack` with the least largest residual
   * (ties: lowest id). So a θ inside region A but within slack of a lower-numbered neighbour B gets
   * A's law, and the slack only catches points just outside every region (rounding on a facet).
   *
   * A region whose padded box misses θ cannot hold it exactly (its box holds it), so its rows are
   * read only when no region holds θ exactly and the slack is positive (the least-residual rule
   * needs every residual within the slack; the padded box is not a proof there, near a sharp
   * corner): the answer is that of testing every listed region.
   */
  locate(theta: ArrayLike<number>, slack: number = tol.inside): number {
    const n = this.n;
    const u = this.unit;
    this.lastViolation = -Infinity;
    for (let j = 0; j < n; j++) {
      const t = (theta[j] - this.lo[j]) / this.width[j];
      const padU = (1e3 * tol.inside) / this.width[j];
      if (!(t >= -padU && t <= 1 + padU)) return -1; // outside the box by more than any region reaches, or NaN
      u[j] = t < 0 ? 0 : t > 1 ? 1 : t;
    }
    // "exact" is every row ≤ b, or ≤ b + slack when the slack is negative (a strict-interior query)
    const exactLimit = Math.min(0, slack);
    let exact = -1;
    let exactV = 0;
    let near = -1;
    let nearV = Infinity;
    const levels = this.usedLevels;
    const boxes = this.boxes;
    const n2 = 2 * n;
    let deferred = 0;
    for (let q = 0; q < levels.length; q++) {
      const L = levels[q];
      const d = this.cellsPerAxis[L];
      let key = 0;
      for (let j = n - 1; j >= 0; j--) {
        const k = Math.floor(u[j] * d);
        key = key * d + (k < d ? k : d - 1);
      }
      const at = this.levels[L].get(key);
      if (at < 0) continue;
      const ids = this.pool;
      const k1 = this.listStart[at] + this.listLen[at];
      for (let k = this.listStart[at]; k < k1; k++) {
        const r = ids[k];
        if (exact >= 0 && r >= exact) break;
        let outside = false;
        const o = r * n2;
        for (let j = 0; j < n; j++) {
          const t = theta[j];
          if (t < boxes[o + j] || t > boxes[o + n + j]) {
            outside = true;
            break;
          }
        }
        if (outside) {
          if (slack > 0) {
            if (deferred === this.later.length) this.later.push(r);
            else this.later[deferred] = r;
            deferred++;
          }
          continue;
        }
        const v = this.residual(r, theta, slack);
        if (v <= exactLimit) {
          exact = r;
          exactV = v;
          break;
        }
        if (v <= slack && (v < nearV || (v === nearV && r < near))) {
          near = r;
          nearV = v;
        }
      }
    }
    if (exact >= 0) {
      this.lastViolation = exactV;
      return exact;
    }
    for (let k = 0; k < deferred; k++) {
      // no exact holder: the regions the box test passed over join the least-residual rule
      const r = this.later[k];
      const v = this.residual(r, theta, slack);
      if (v <= slack && (v < nearV || (v === nearV && r < near))) {
        near = r;
        nearV = v;
      }
    }
    if (near >= 0) this.lastViolation = nearV;
    return near;
  }

  /** Kept for callers of a finished locator: the cell hashes are already flat typed arrays. */
  freeze(): this {
    return this;
  }

  private unit = new Float64Array(64);
  /** regions whose box test failed in the current `locate` (positive slack only) */
  private later: number[] = [];
}

/**
 * A hash from cell keys (integers below 2^52) to list indices (≥ 0), open addressing with linear
 * probing in typed arrays: the grid's cell lookup without a `Map` of boxed double keys.
 */
class CellHash {
  private keys = new Float64Array(64).fill(-1);
  private vals = new Int32Array(64);
  private mask = 63;
  private used = 0;

  private slot(key: number): number {
    const lo = key >>> 0;
    const hi = Math.floor(key / 4294967296) | 0;
    let h = Math.imul(lo ^ Math.imul(hi, 0x9e3779b1), 0x85ebca6b);
    h ^= h >>> 15;
    h = Math.imul(h, 0xc2b2ae35);
    h ^= h >>> 13;
    return h & this.mask;
  }

  /** The list index stored for key, or −1. */
  get(key: number): number {
    const keys = this.keys;
    for (let s = this.slot(key); ; s = (s + 1) & this.mask) {
      const k = keys[s];
      if (k === key) return this.vals[s];
      if (k === -1) return -1;
    }
  }

  /** Store value for a key not yet present. */
  set(key: number, value: number): void {
    if (2 * (this.used + 1) > this.keys.length) this.grow();
    const keys = this.keys;
    let s = this.slot(key);
    while (keys[s] !== -1) s = (s + 1) & this.mask;
    keys[s] = key;
    this.vals[s] = value;
    this.used++;
  }

  private grow(): void {
    const oldK = this.keys;
    const oldV = this.vals;
    this.keys = new Float64Array(2 * oldK.length).fill(-1);
    this.vals = new Int32Array(2 * oldK.length);
    this.mask = this.keys.length - 1;
    this.used = 0;
    for (let s = 0; s < oldK.length; s++) if (oldK[s] !== -1) this.set(oldK[s], oldV[s]);
  }
}

/**
 * Axis-aligned bounding box of {θ : A θ ≤ b} by 2·nθ LPs from an interior point (the exact box,
 * widened by `pad`). Used where regions come without one (tables read from a file).
 */
export function boundingBoxByLp(A: ArrayLike<ArrayLike<number>>, b: ArrayLike<number>, interior: ArrayLike<number> | null, pad: number): { lo: Float64Array; hi: Float64Array } {
  const m = b.length;
  const n = A[0]?.length ?? interior?.length ?? 0;
  const Af = new Float64Array(m * n);
  const bf = Float64Array.from(b);
  for (let i = 0; i < m; i++) for (let j = 0; j < n; j++) Af[i * n + j] = A[i][j];
  let x0: Float64Array;
  if (interior) x0 = Float64Array.from(interior);
  else x0 = chebyshevBall(Af, bf, m, n, new Float64Array(n), 1e6).center;
  const lo = new Float64Array(n);
  const hi = new Float64Array(n);
  const c = new Float64Array(n);
  for (let j = 0; j < n; j++) {
    c.fill(0);
    c[j] = 1;
    const up = lpMaximizeFrom(c, Af, bf, m, n, x0);
    c[j] = -1;
    const dn = lpMaximizeFrom(c, Af, bf, m, n, x0);
    hi[j] = (up.status === 'optimal' ? up.value : Infinity) + pad;
    lo[j] = (dn.status === 'optimal' ? -dn.value : -Infinity) - pad;
  }
  return { lo, hi };
}

/**
 * Axis-aligned bounding box of {θ : A θ ≤ b} (the table's rows of one region, nθ columns), widened
 * by `pad`: the box of `boundingBoxByLp` with fewer LPs, for the point-location index.
 * - A row with one nonzero entry, a_j θ_j ≤ b, bounds θ_j by b/a_j with no LP. A table keeps only
 *   facet rows, and a facet is reached, so that side is the region's exact extent; were the row
 *   redundant the side would only be wider (still a box that holds the region). The quotient's
 *   rounding (half an ulp) is paid with one ulp.
 * - Every LP that ends at a vertex leaves its optimal basis W (nθ rows). Another side ±e_j whose
 *   direction lies in the cone of W's normals (A_Wᵀ y = ±e_j with y ≥ 0, solved by partial
 *   pivoting) has the same maximiser (the KKT conditions of that LP hold there: the vertex is
 *   feasible and the multipliers are ≥ 0), so the side is that vertex's coordinate, no new LP. A
 *   multiplier within −1e-12·max|y| of zero counts as zero: the value moves by less than
 *   1e-12·Σ|y_i||a_i·θ − b_i| over the region, far inside `pad`.
 * - The other sides by LP from `interior` (as `boundingBoxByLp`).
 * On the first 6 000 regions of boom-4d-n12 this solves 25 % of the 48 000 LPs … (see DEVELOPERS.md).
 */
export function regionBoundingBox(A: ArrayLike<ArrayLike<number>>, b: ArrayLike<number>, interior: ArrayLike<number> | null, pad: number): { lo: Float64Array; hi: Float64Array } {
  const m = b.length;
  const n = A[0]?.length ?? interior?.length ?? 0;
  const Af = new Float64Array(m * n);
  for (let i = 0; i < m; i++) for (let j = 0; j < n; j++) Af[i * n + j] = A[i][j];
  const lo = new Float64Array(n);
  const hi = new Float64Array(n);
  packedBoundingBox(Af, Float64Array.from(b), m, n, interior, pad, lo, hi);
  return { lo, hi };
}

/**
 * `regionBoundingBox` of the region A θ ≤ b given packed (A row-major, m × n, read only; b is
 * handed to the LPs), written into lo/hi: the same steps on the same numbers, so the same box. For
 * the threads that share the boxes of a table (`tableBoxes`).
 */
export function packedBoundingBox(Af: Float64Array, bf: Float64Array, m: number, n: number, interior: ArrayLike<number> | null, pad: number, lo: Float64Array, hi: Float64Array): void {
  lo.fill(-Infinity);
  hi.fill(Infinity);
  // 0: side unknown, 1: known from a row with one nonzero entry
  const known = new Uint8Array(2 * n);
  for (let i = 0; i < m; i++) {
    let at = -1;
    let count = 0;
    for (let j = 0; j < n; j++)
      if (Af[i * n + j] !== 0) {
        count++;
        at = j;
      }
    if (count !== 1) continue;
    const a = Af[i * n + at];
    const t = bf[i] / a;
    const ulp = Math.abs(t) * 2 ** -52;
    if (a > 0) {
      hi[at] = Math.min(hi[at], t + ulp);
      known[2 * at] = 1;
    } else {
      lo[at] = Math.max(lo[at], t - ulp);
      known[2 * at + 1] = 1;
    }
  }
  let all = true;
  for (let k = 0; k < 2 * n; k++) if (!known[k]) all = false;
  if (!all) {
    const x0 = interior ? Float64Array.from(interior) : chebyshevBall(Af, bf, m, n, new Float64Array(n), 1e6).center;
    const c = new Float64Array(n);
    const bases: { W: Int32Array; x: Float64Array }[] = [];
    const M = new Float64Array(n * n);
    const y = new Float64Array(n);
    for (let j = 0; j < n; j++)
      for (const sgn of [1, -1]) {
        if (known[2 * j + (sgn > 0 ? 0 : 1)]) continue;
        let value = NaN;
        for (const { W, x } of bases) {
          // A_Wᵀ y = sgn·e_j
          for (let i = 0; i < n; i++) for (let k = 0; k < n; k++) M[k * n + i] = Af[W[i] * n + k];
          y.fill(0);
          y[j] = sgn;
          if (!luSolveInPlace(M, y, n, 1e-10)) continue;
          let yMax = 0;
          for (let i = 0; i < n; i++) yMax = Math.max(yMax, Math.abs(y[i]));
          let cone = true;
          for (let i = 0; i < n; i++) if (!(y[i] >= -1e-12 * yMax)) cone = false;
          if (cone) {
            value = sgn * x[j];
            break;
          }
        }
        if (Number.isNaN(value)) {
          c.fill(0);
          c[j] = sgn;
          const res = lpMaximizeFrom(c, Af, bf, m, n, x0);
          value = res.status === 'optimal' ? res.value : Infinity;
          if (res.status === 'optimal' && res.working && res.working.length === n) bases.push({ W: Int32Array.from(res.working), x: res.x.slice(0, n) });
        }
        if (sgn > 0) hi[j] = value;
        else lo[j] = -value;
      }
  }
  for (let j = 0; j < n; j++) {
    hi[j] += pad;
    lo[j] -= pad;
  }
}

/** The padding of the boxes `tableLocator` builds on (beyond the query slack: see `regionBoundingBox`). */
export const tableBoxPad = (): number => 1e3 * tol.inside;

/**
 * The shared locator of a finished table's regions: bounding boxes by LP (from each region's
 * Chebyshev centre), then a k-d tree over them (`BoxIndex`). `locate` returns what `locateScan`
 * returns, with a few regions tested per query.
 */
export function tableLocator(regions: Pick<CriticalRegion, 'A' | 'b' | 'chebyshev'>[], lower: ArrayLike<number>, upper: ArrayLike<number>, given?: ArrayLike<{ lo: ArrayLike<number>; hi: ArrayLike<number> }>, oneRun = false): BoxIndex {
  const pad = tableBoxPad();
  // `given`: these boxes, computed elsewhere the same way (src/table/shared-boxes.ts: threads sharing the LPs)
  const boxes = given ?? regions.map((r) => (r.b.length === 0 ? { lo: lower, hi: upper } : regionBoundingBox(r.A, r.b, r.chebyshev?.center ?? null, pad)));
  return new BoxIndex(regions, boxes, lower, upper, tableLocatorOptions(lower.length, oneRun));
}

/** Parts of a tree for one run (`tableLocatorOptions`): enough for two threads to share them evenly, few enough that the top stays small. */
export const ONE_RUN_PARTS = 32;

/**
 * The build options of `tableLocator` for nθ = n. The rule of locateScan and of GridLocator.locate:
 * exact containment first (lowest index), else the least residual. Listing budget: up to nθ = 4, 12
 * listings per region build the tree in a third of the time of 24 with no slower lookups (boom-4d-n12
 * 6k and boom-4d-n8 tables, paired); in 6-D the lookups were 20 % slower with 12, and there they cost
 * far more than the build. `oneRun`: a tree for the queries of one run, not kept (evaluate without an
 * index file): 8, the build ~1/3 cheaper for lookups ~as fast on the 6k table (an index file keeps 12:
 * it is read by many runs), grown in ONE_RUN_PARTS parts (`planTree`), which the threads of a
 * threaded evaluate share (`ThreadedCsv.shareTree`). Any budget and any parts give the same answers
 * (every region holding θ is listed in θ's leaf).
 */
export function tableLocatorOptions(n: number, oneRun: boolean): BoxIndexOptions {
  return { rule: 'exact-first', listingBudget: n <= 4 ? (oneRun ? 8 : 12) : 24, parts: oneRun ? ONE_RUN_PARTS : 1 };
}

interface CachedLocator {
  calls: number;
  locator: BoxIndex | null;
}
const cache = new WeakMap<object, CachedLocator>();

/** Where a point lies: the region and its largest residual there (≤ 0: inside exactly). */
export interface Location {
  /** index into the regions array, −1 when no region holds θ within the slack */
  region: number;
  /** max_i(a_i·θ − b_i) of that region (≤ 0 exactly inside, ≤ slack when held only by the slack); −Infinity when region = −1 */
  violation: number;
}

/**
 * Locate θ (nθ entries, the table's units) among `regions`: the region holding θ exactly (every
 * row ≤ b; the lowest index among several, as on a shared facet) and, only when none does, the
 * region within `slack` with the least largest residual (ties: lowest index). θ inside region A
 * but within slack of a neighbour B therefore gets A's law, whatever their order. Repeated queries
 * on the same regions array go through a k-d tree (`tableLocator`) built on first need (after a few
 * queries, so that a single lookup does not pay for the bounding-box LPs); a slack wider than the
 * tree's padding falls back to the sequential scan, which applies the same rule.
 */
export function locatePoint(regions: Pick<CriticalRegion, 'A' | 'b' | 'chebyshev'>[], theta: ArrayLike<number>, slack: number, box: { lower: ArrayLike<number>; upper: ArrayLike<number> }): Location {
  const tree = lazyTree(regions, slack, box);
  if (tree) {
    const region = tree.locate(theta, slack);
    return { region, violation: tree.lastViolation };
  }
  return locateScan(regions, theta, slack);
}

/** The k-d tree `locatePoint` queries for this call (counted), or null where it scans. */
function lazyTree(regions: Pick<CriticalRegion, 'A' | 'b' | 'chebyshev'>[], slack: number, box: { lower: ArrayLike<number>; upper: ArrayLike<number> }): BoxIndex | null {
  let entry = cache.get(regions);
  if (!entry) {
    entry = { calls: 0, locator: null };
    cache.set(regions, entry);
  }
  entry.calls++;
  if (!entry.locator && regions.length >= 32 && entry.calls > 16) entry.locator = tableLocator(regions, box.lower, box.upper);
  return entry.locator && entry.locator.size === regions.length && Math.abs(slack) <= 100 * tol.inside ? entry.locator : null;
}

/**
 * The k-d tree `locatePoint` keeps for this regions array (`tableLocator`), built now if it has not
 * been yet; null for fewer than 32 regions, where `locatePoint` scans. For callers that locate many
 * points at once (`evaluateCsvChunks`): `locate`/`locateAt` on it answer what `locatePoint` answers
 * for |slack| ≤ 100·tol.inside.
 */
export function sharedTableLocator(regions: Pick<CriticalRegion, 'A' | 'b' | 'chebyshev'>[], box: { lower: ArrayLike<number>; upper: ArrayLike<number> }): BoxIndex | null {
  if (regions.length < 32) return null;
  let entry = cache.get(regions);
  if (!entry) {
    entry = { calls: 0, locator: null };
    cache.set(regions, entry);
  }
  if (!entry.locator || entry.locator.size !== regions.length) entry.locator = tableLocator(regions, box.lower, box.upper);
  return entry.locator;
}

/**
 * The rule of `locatePoint` by a scan over every region (no index): exact containment first (lowest
 * index), else the least residual within `slack`.
 */
export function locateScan(regions: Pick<CriticalRegion, 'A' | 'b'>[], theta: ArrayLike<number>, slack: number = tol.inside): Location {
  const exactLimit = Math.min(0, slack); // a negative slack asks for the strict interior
  let near = -1;
  let nearV = Infinity;
  for (let i = 0; i < regions.length; i++) {
    const v = regionViolation(regions[i], theta, slack);
    if (v <= exactLimit) return { region: i, violation: v };
    if (v <= slack && v < nearV) {
      near = i;
      nearV = v;
    }
  }
  return { region: near, violation: near < 0 ? -Infinity : nearV };
}

/**
 * Index of the region holding θ (exactly if any does, else the least residual within slack; see
 * `locatePoint`), or −1.
 */
export function locateRegion(regions: Pick<CriticalRegion, 'A' | 'b' | 'chebyshev'>[], theta: ArrayLike<number>, slack: number, box: { lower: ArrayLike<number>; upper: ArrayLike<number> }): number {
  // the region only: the tree's query skips the residual pass over its rows
  const tree = lazyTree(regions, slack, box);
  return tree ? tree.locate(theta, slack, false) : locateScan(regions, theta, slack).region;
}

/**
 * Largest residual max_i(a_i·θ − b_i) of the region's half-spaces at θ (≤ 0: θ inside exactly).
 * The scan stops at the first row above `limit` and returns that residual; NaN θ gives +Infinity,
 * a region without rows −Infinity.
 */
export function regionViolation(region: Pick<CriticalRegion, 'A' | 'b'>, theta: ArrayLike<number>, limit: number = Infinity): number {
  const { A, b } = region;
  let worst = -Infinity;
  for (let i = 0; i < A.length; i++) {
    const row = A[i];
    let s = 0;
    for (let j = 0; j < row.length; j++) s += row[j] * theta[j];
    const v = s - b[i];
    if (!(v <= limit)) return Number.isNaN(v) ? Infinity : v;
    if (v > worst) worst = v;
  }
  return worst;
}

/** True when θ satisfies every half-space of the region within `slack`. */
export function regionContains(region: Pick<CriticalRegion, 'A' | 'b'>, theta: ArrayLike<number>, slack: number = tol.inside): boolean {
  const { A, b } = region;
  for (let i = 0; i < A.length; i++) {
    const row = A[i];
    let s = 0;
    for (let j = 0; j < row.length; j++) s += row[j] * theta[j];
    if (!(s <= b[i] + slack)) return false; // NaN θ lies in no region
  }
  return true;
}

