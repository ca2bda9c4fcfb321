/**
 * LP-free decisions for the pair test of the canonical neighbours (`canonicalNeighbours`,
 * canonical.ts): do facet f of region R and the opposite facet g of region S overlap in a piece of
 * radius > minPiece?
 *
 * The test that decides is a Chebyshev LP over the overlap polytope O in the coordinates of R's
 * facet hyperplane H = {a·θ = β} (a = R.A[f], unit): R's rows except f and S's rows except g, each
 * projected onto H and scaled to unit length (`slicePolytope`/`overlapsFacet`, solve.ts). Most
 * pairs that reach it in 5-D are not neighbours (their regions' boxes meet, their facets do not),
 * so this file tries, before that LP, certificates that give the LP's answer without solving it:
 *
 * - **Reject by a slab** — a row q of O (of R or of S) and a lower bound L of q·θ over O proved by
 *   weak duality (common practice; as the region builder's `farkasBound`, prefilter.ts): if
 *   (b_q − L)/‖q‖_H ≤ minPiece/2, O lies in a slab of that width, so its Chebyshev radius is
 *   ≤ minPiece/4 and the LP says no. The row and the rows of the proof are *found* from the
 *   vertices of the facets (below): the row whose least value over the other facet's vertices is
 *   nearest its bound, and the rows tight at that vertex, with the facet's own row replaced by H
 *   (either sign: O lies on H).
 * - **Reject by boxes** — the same slab across one axis θ_j, from a proved side of each facet's box
 *   (proved once per facet side, at the vertex where the side is reached, over the facet's own
 *   hyperplane; S's hyperplane differs from H on R's box by at most Δ, found by interval
 *   arithmetic, and the proof pays |y_H|·Δ for it).
 * - **Accept** — a point of H whose distance to every (projected, unit) row of O is
 *   > minPiece + 1e-9: that ball lies in O, so the LP's optimum is > minPiece. Points tried: the
 *   mean of the vertices of R's facet, and of S's facet, moved onto H.
 *
 * Every bound is valid whatever the vertex list is (weak duality over rows of O, the residual paid
 * for over R's padded box, which holds O): round-off in the vertices can only make a proof fail,
 * never decide a pair wrongly. The margins are far from the threshold, so the LP's own round-off
 * cannot disagree; pairs no certificate decides (−1) go to the LP. Rows parallel to H (projected
 * length < 1e-9) are dropped by the LP, or empty its slice; such rows never enter a proof, a row
 * too near that threshold leaves an accept to the LP, and a reject needs every nearly parallel row
 * of R to hold on H within R's box with room (then the overlap the LP sees lies in R's box).
 *
 * Vertices: the double description method (Motzkin et al. 1953) from the corners of the region's
 * padded bounding box, cut by one row at a time; each vertex carries the rows tight at it as a bit
 * mask, and an inside and an outside vertex span an edge when their common tight rows have rank
 * n − 1 (Fukuda & Prodon 1996), read off the count of common rows when either vertex is simple.
 * The method of vertices.ts, with bit masks and flat arrays (its lists cost 1 ms per 5-D region).
 */
import { prefilterScratch, type PrefilterScratch } from './prefilter.js';
import { tol } from '../tol.js';
import { luSolveInPlace } from '../linalg/dense.js';
import type { PairCounts } from './types.js';
import { Arena } from '../util/arena.js';

export type { PairCounts };

/** A region as the pair test reads it: unit rows A θ ≤ b, and (when known) a point inside it, its Chebyshev centre. */
export interface PairRegion {
  A: number[][];
  b: number[];
  chebyshev?: { center: ArrayLike<number> };
}

/** Zero counters. */
export function zeroPairCounts(): PairCounts {
  return { tests: 0, accepted: 0, centred: 0, rejected: 0, opposed: 0, boxes: 0, parallel: 0, lps: 0 };
}

/** Add the pair counters of `b` into `a` (other fields of either are left alone). */
export function addPairCounts(a: PairCounts, b: PairCounts): void {
  a.tests += b.tests;
  a.accepted += b.accepted;
  a.centred += b.centred;
  a.opposed += b.opposed;
  a.rejected += b.rejected;
  a.boxes += b.boxes;
  a.parallel += b.parallel;
  a.lps += b.lps;
}

/**
 * One region, prepared on first use. Per facet row f (k = facet's vertex count): its vertices
 * `fv[fStart[f]..fStart[f+1])` (indices into X), and in `fNum` at f·9n: the vertices' mean (n),
 * box low (n), box high (n), then the proved sides (see `proved`): side0 (2n, NaN: not tried,
 * +∞: no proof), sideY (2n), sideE (2n); in `fArg` at f·2n the vertex reaching each box side
 * (low j at 2j, high j at 2j + 1).
 */
interface RegionData {
  /** rows of the region; A and b hold them, then the 2n rows of the padded box, then a spare row */
  m: number;
  A: Float64Array;
  b: Float64Array;
  /** squared length of each region row */
  sq: Float64Array;
  /** the padded box (holds the region), and its largest |θ_j| */
  lo: Float64Array;
  hi: Float64Array;
  big: number;
  /** vertices (count × n) and their tight rows (count × words bit masks); null when the method gave up */
  X: Float64Array | null;
  T: Uint32Array | null;
  count: number;
  words: number;
  fStart: Int32Array;
  fv: Int32Array;
  fNum: Float64Array;
  fArg: Int32Array;
  /** per facet: −1 not known yet, 1 a nearly parallel row is not clearly slack on its hyperplane (no reject with it as R's), 0 none */
  fPar: Int8Array;
}

/** A vertex list giving up past this many vertices leaves the region's pairs to the LP. */
const maxVertices = 4000;
/** Round-off slack of the cuts (unit rows): a vertex within it is on the row. */
const cutEps = 1e-10;
/** Rows projected shorter than √parallelSq (1e-5) on a facet's hyperplane never enter its box proofs. */
const parallelSq = 1e-10;
/** Slab certificates tried per side of a pair (rows nearest to separating first). */
const triesPerSide = 3;

function popcount(x: number): number {
  x -= (x >>> 1) & 0x55555555;
  x = (x & 0x33333333) + ((x >>> 2) & 0x33333333);
  return (((x + (x >>> 4)) & 0x0f0f0f0f) * 0x01010101) >>> 24;
}

/**
 * LP-free pair decisions over one set of regions (one instance per `canonicalNeighbours` call or
 * share; its scratch is its own, never shared between threads). `boxes[r]` must hold region r.
 */
export class FacetPairs {
  private readonly n: number;
  private readonly data: (RegionData | undefined)[];
  private readonly scratch: PrefilterScratch;
  private readonly c: Float64Array;
  private readonly p: Float64Array;
  // opposedRows: the rows of R then S projected on H (unit, n each) and their bounds on H
  private proj = new Float64Array(0);
  private projU = new Float64Array(0);
  private readonly origin: Float64Array;
  private readonly subset: Int32Array;
  // per pair: projected length of each row of R and of S on H (0: not a row the LP keeps)
  private nR = new Float64Array(16);
  private nS = new Float64Array(16);
  // the double description's buffers (two, swapped at every cut), its row values, edge scratch
  private bufX = [new Float64Array(0), new Float64Array(0)];
  private bufT = [new Uint32Array(0), new Uint32Array(0)];
  private vals = new Float64Array(0);
  private ins = new Int32Array(0);
  private pc = new Int32Array(0);
  private common = new Int32Array(64);
  private rankM = new Float64Array(0);
  // the slab search and the proofs
  private tightRows: number[] = [];
  private readonly best = new Int32Array(triesPerSide);
  private readonly gaps = new Float64Array(triesPerSide);
  private readonly ats = new Int32Array(triesPerSide);
  private readonly lens = new Float64Array(triesPerSide);
  // planeBound's last bound in parts: Σ y·b, |y_H|, Σ|residual|
  private part0 = 0;
  private partY = 0;
  private partE = 0;
  /** counters of every decision so far */
  readonly counts: PairCounts = zeroPairCounts();
  /** false: no vertex lists (no slab or box rejects, no vertex-mean accepts): only the accept at points from the Chebyshev centres */
  private readonly withVertices: boolean;
  /** where the regions' data live (views of shared blocks: a dozen small arrays per region, kept for every region met; 100k regions: ~1.5 kB a region less than arrays of their own) */
  private readonly arena = new Arena();

  constructor(
    private readonly regions: readonly PairRegion[],
    private readonly boxes: readonly { lo: ArrayLike<number>; hi: ArrayLike<number> }[],
    n: number,
    private readonly minPiece: number,
    options: { vertices?: boolean } = {},
  ) {
    this.withVertices = options.vertices ?? true;
    this.n = n;
    this.data = new Array(regions.length);
    this.scratch = prefilterScratch(n);
    this.c = new Float64Array(n);
    this.p = new Float64Array(n);
    this.origin = new Float64Array(n);
    this.subset = new Int32Array(n);
  }

  /**
   * Whether facet f of region r and facet g of region s (on the same hyperplane, opposite sides)
   * overlap in a piece of radius > minPiece: 1 yes, 0 no, −1 undecided (the caller solves the LP).
   */
  decide(r: number, f: number, s: number, g: number): 1 | 0 | -1 {
    const n = this.n;
    const DR = this.region(r);
    const DS = this.region(s);
    this.counts.tests++;
    const a = DR.A.subarray(f * n, (f + 1) * n);
    const beta = DR.b[f];
    for (let j = 0; j < n; j++) this.origin[j] = a[j] * beta;
    const hasR = DR.X !== null && DR.fStart[f + 1] > DR.fStart[f];
    const hasS = DS.X !== null && DS.fStart[g + 1] > DS.fStart[g];
    // the certificate that has decided more pairs so far goes first (the answer is the same
    // either way: the two cannot both hold)
    const rejectFirst = 2 * this.counts.accepted < this.counts.tests;
    if (rejectFirst && this.reject(DR, hasR, f, DS, hasS, g, a, beta)) return 0;
    if (this.nR.length < DR.m) this.nR = new Float64Array(2 * DR.m);
    if (this.nS.length < DS.m) this.nS = new Float64Array(2 * DS.m);
    let state = this.lengths(DR, f, a, this.nR);
    if (state === 'ok') state = this.lengths(DS, g, a, this.nS);
    if (state === 'empty') {
      this.counts.parallel++;
      return 0;
    }
    if (state === 'ok' && ((hasR && this.inside(DR, f, a, beta, DR, DS)) || (hasS && this.inside(DS, g, a, beta, DR, DS)))) {
      this.counts.accepted++;
      return 1;
    }
    if (state === 'ok' && this.centred(r, s, a, beta, DR, DS)) {
      this.counts.accepted++;
      this.counts.centred++;
      return 1;
    }
    if (!rejectFirst && this.reject(DR, hasR, f, DS, hasS, g, a, beta)) return 0;
    if (state === 'ok' && this.opposedRows(DR, f, DS, a, beta)) {
      this.counts.rejected++;
      this.counts.opposed++;
      return 0;
    }
    this.counts.lps++;
    return -1;
  }

  /**
   * The mean of the vertices of facet f of region r, written into `out` (n values); false when
   * the region has no vertex list (built without vertices, or the method gave up) or the facet
   * no vertex.
   */
  facetMean(r: number, f: number, out: Float64Array): boolean {
    const d = this.region(r);
    if (d.X === null || d.fStart[f + 1] === d.fStart[f]) return false;
    const o = f * 9 * this.n;
    for (let j = 0; j < this.n; j++) out[j] = d.fNum[o + j];
    return true;
  }

  /**
   * Whether facet f of region r and facet g of region s have the same vertices within `delta`
   * (max-norm): every vertex of either lies within `delta` of a vertex of the other. False
   * without vertex lists, or for a facet with fewer than n vertices (no full facet).
   */
  sameVertices(r: number, f: number, s: number, g: number, delta: number): boolean {
    const n = this.n;
    const DR = this.region(r);
    const DS = this.region(s);
    if (DR.X === null || DS.X === null) return false;
    if (DR.fStart[f + 1] - DR.fStart[f] < n || DS.fStart[g + 1] - DS.fStart[g] < n) return false;
    return this.within(DR, f, DS, g, delta) && this.within(DS, g, DR, f, delta);
  }

  /** Every vertex of facet f of P lies within `delta` of a vertex of facet g of Q. */
  private within(P: RegionData, f: number, Q: RegionData, g: number, delta: number): boolean {
    const n = this.n;
    const XP = P.X!;
    const XQ = Q.X!;
    for (let t = P.fStart[f]; t < P.fStart[f + 1]; t++) {
      const x = P.fv[t] * n;
      let found = false;
      for (let u = Q.fStart[g]; u < Q.fStart[g + 1] && !found; u++) {
        const y = Q.fv[u] * n;
        let j = 0;
        while (j < n && Math.abs(XP[x + j] - XQ[y + j]) <= delta) j++;
        found = j === n;
      }
      if (!found) return false;
    }
    return true;
  }

  /** Region r's rows, box and vertices, built on first use. */
  private region(r: number): RegionData {
    const have = this.data[r];
    if (have) return have;
    const n = this.n;
    const R = this.regions[r];
    const m = R.A.length;
    const arena = this.arena;
    const A = arena.f64((m + 2 * n + 1) * n);
    const b = arena.f64(m + 2 * n + 1);
    const sq = arena.f64(m);
    for (let i = 0; i < m; i++) {
      let s = 0;
      for (let j = 0; j < n; j++) {
        A[i * n + j] = R.A[i][j];
        s += R.A[i][j] * R.A[i][j];
      }
      b[i] = R.b[i];
      sq[i] = s;
    }
    // the box, padded: a region is bounded by its own rows, so no vertex should end on a padded side
    const box = this.boxes[r];
    const lo = arena.f64(n);
    const hi = arena.f64(n);
    let big = 0;
    for (let j = 0; j < n; j++) {
      const pad = 1e-6 * (1 + Math.abs(box.hi[j] - box.lo[j]));
      lo[j] = box.lo[j] - pad;
      hi[j] = box.hi[j] + pad;
      big = Math.max(big, Math.abs(lo[j]), Math.abs(hi[j]));
      A[(m + 2 * j) * n + j] = 1;
      b[m + 2 * j] = hi[j];
      A[(m + 2 * j + 1) * n + j] = -1;
      b[m + 2 * j + 1] = -lo[j];
    }
    const words = (m + 2 * n + 31) >>> 5;
    const d: RegionData = {
      m,
      A,
      b,
      sq,
      lo,
      hi,
      big,
      X: null,
      T: null,
      count: 0,
      words,
      fStart: arena.i32(m + 1),
      fv: arena.i32(0),
      fNum: arena.f64(0),
      fArg: arena.i32(0),
      fPar: arena.i8(m).fill(-1),
    };
    if (this.withVertices) {
      this.vertices(d);
      if (d.X) this.facets(d);
    }
    this.data[r] = d;
    return d;
  }

  private grow(k: number, n: number, words: number): void {
    if (this.bufX[0].length >= k * n) return;
    const cap = Math.max(k, 2 * (this.bufX[0].length / n)) | 0;
    for (let t = 0; t < 2; t++) {
      const X = new Float64Array(cap * n);
      X.set(this.bufX[t].subarray(0, Math.min(this.bufX[t].length, X.length)));
      this.bufX[t] = X;
      const T = new Uint32Array(cap * words);
      T.set(this.bufT[t].subarray(0, Math.min(this.bufT[t].length, T.length)));
      this.bufT[t] = T;
    }
    if (this.vals.length < cap) this.vals = new Float64Array(cap);
  }

  /** Rank of the rows listed in common[0..k) of A (n columns), elimination with a relative pivot threshold. */
  private rank(A: Float64Array, n: number, k: number): number {
    if (this.rankM.length < k * n) this.rankM = new Float64Array(2 * k * n);
    const M = this.rankM;
    for (let i = 0; i < k; i++) for (let j = 0; j < n; j++) M[i * n + j] = A[this.common[i] * n + j];
    let rank = 0;
    for (let col = 0; col < n && rank < k; col++) {
      let piv = -1;
      let best = 1e-9;
      for (let i = rank; i < k; i++) {
        const v = Math.abs(M[i * n + col]);
        if (v > best) {
          best = v;
          piv = i;
        }
      }
      if (piv < 0) continue;
      if (piv !== rank)
        for (let j = 0; j < n; j++) {
          const t = M[piv * n + j];
          M[piv * n + j] = M[rank * n + j];
          M[rank * n + j] = t;
        }
      for (let i = rank + 1; i < k; i++) {
        const g = M[i * n + col] / M[rank * n + col];
        if (g === 0) continue;
        for (let j = col; j < n; j++) M[i * n + j] -= g * M[rank * n + j];
      }
      rank++;
    }
    return rank;
  }

  /** The double description of region d (sets d.X, d.T, d.count; leaves them null when it gives up). */
  private vertices(d: RegionData): void {
    const n = this.n;
    const W = d.words;
    const { A, b, m } = d;
    let count = 1 << n;
    this.grow(Math.max(count, 64), n, W);
    let cur = 0;
    {
      const X = this.bufX[cur];
      const T = this.bufT[cur];
      T.fill(0, 0, count * W);
      for (let mask = 0; mask < count; mask++)
        for (let j = 0; j < n; j++) {
          const up = (mask >> j) & 1;
          X[mask * n + j] = up ? d.hi[j] : d.lo[j];
          const row = m + 2 * j + (up ? 0 : 1);
          T[mask * W + (row >>> 5)] |= 1 << (row & 31);
        }
    }
    for (let r = 0; r < m; r++) {
      let X = this.bufX[cur];
      let T = this.bufT[cur];
      const s = this.vals;
      let outside = 0;
      let inside = 0;
      for (let v = 0; v < count; v++) {
        let t = -b[r];
        for (let j = 0; j < n; j++) t += A[r * n + j] * X[v * n + j];
        s[v] = t;
        if (t > cutEps) outside++;
        else if (t < -cutEps) inside++;
      }
      const word = r >>> 5;
      const bit = 1 << (r & 31);
      if (outside === 0) {
        for (let v = 0; v < count; v++) if (s[v] >= -cutEps) T[v * W + word] |= bit;
        continue;
      }
      // kept vertices, then the crossing points of the edges from inside to outside
      this.grow(Math.min(count - outside + outside * inside, maxVertices + 1), n, W);
      X = this.bufX[cur];
      T = this.bufT[cur];
      const nx = 1 - cur;
      const X2 = this.bufX[nx];
      const T2 = this.bufT[nx];
      let next = 0;
      for (let v = 0; v < count; v++) {
        if (s[v] > cutEps) continue;
        for (let j = 0; j < n; j++) X2[next * n + j] = X[v * n + j];
        for (let w = 0; w < W; w++) T2[next * W + w] = T[v * W + w];
        if (s[v] >= -cutEps) T2[next * W + word] |= bit;
        next++;
      }
      if (this.ins.length < count) {
        this.ins = new Int32Array(2 * count);
        this.pc = new Int32Array(2 * count);
      }
      const ins = this.ins;
      const pc = this.pc;
      let nIn = 0;
      for (let v = 0; v < count; v++) {
        let c = 0;
        for (let w = 0; w < W; w++) c += popcount(T[v * W + w]);
        pc[v] = c;
        if (s[v] < -cutEps) ins[nIn++] = v;
      }
      for (let p = 0; p < count; p++) {
        if (!(s[p] > cutEps)) continue;
        const tp = pc[p];
        const t0 = T[p * W];
        for (let qi = 0; qi < nIn; qi++) {
          const q = ins[qi];
          let k = popcount(t0 & T[q * W]);
          for (let w = 1; w < W; w++) k += popcount(T[p * W + w] & T[q * W + w]);
          if (k < n - 1) continue;
          // a simple vertex's rows are independent: n − 1 of them shared make an edge (n shared:
          // the same point); a pair of degenerate vertices takes the rank test
          if (tp === n || pc[q] === n) {
            if (k !== n - 1) continue;
          } else {
            if (this.common.length < k) this.common = new Int32Array(2 * k);
            let c = 0;
            for (let w = 0; w < W; w++) {
              let x = T[p * W + w] & T[q * W + w];
              while (x !== 0) {
                const low = x & -x;
                this.common[c++] = (w << 5) + (31 - Math.clz32(low));
                x ^= low;
              }
            }
            if (this.rank(A, n, c) !== n - 1) continue;
          }
          if (next >= maxVertices) return;
          const t = s[p] / (s[p] - s[q]);
          for (let j = 0; j < n; j++) X2[next * n + j] = X[p * n + j] + t * (X[q * n + j] - X[p * n + j]);
          for (let w = 0; w < W; w++) T2[next * W + w] = T[p * W + w] & T[q * W + w];
          T2[next * W + word] |= bit;
          next++;
        }
      }
      count = next;
      cur = nx;
    }
    d.X = this.arena.f64(count * n);
    d.X.set(this.bufX[cur].subarray(0, count * n));
    d.T = this.arena.u32(count * W);
    d.T.set(this.bufT[cur].subarray(0, count * W));
    d.count = count;
  }

  /** Every facet's vertices (those tight at its row), their mean and box (see RegionData). */
  private facets(d: RegionData): void {
    const n = this.n;
    const { m, words: W, count } = d;
    const X = d.X!;
    const T = d.T!;
    const fStart = d.fStart;
    for (let v = 0; v < count; v++)
      for (let f = 0; f < m; f++) if (T[v * W + (f >>> 5)] & (1 << (f & 31))) fStart[f + 1]++;
    for (let f = 0; f < m; f++) fStart[f + 1] += fStart[f];
    const fv = this.arena.i32(fStart[m]);
    const fill = fStart.slice(0, m);
    for (let v = 0; v < count; v++)
      for (let f = 0; f < m; f++) if (T[v * W + (f >>> 5)] & (1 << (f & 31))) fv[fill[f]++] = v;
    const stride = 9 * n;
    const num = this.arena.f64(m * stride);
    const arg = this.arena.i32(m * 2 * n);
    for (let f = 0; f < m; f++) {
      const o = f * stride;
      const k = fStart[f + 1] - fStart[f];
      for (let j = 0; j < n; j++) {
        num[o + n + j] = Infinity;
        num[o + 2 * n + j] = -Infinity;
      }
      for (let t = fStart[f]; t < fStart[f + 1]; t++) {
        const v = fv[t];
        for (let j = 0; j < n; j++) {
          const x = X[v * n + j];
          num[o + j] += x;
          if (x < num[o + n + j]) {
            num[o + n + j] = x;
            arg[f * 2 * n + 2 * j] = v;
          }
          if (x > num[o + 2 * n + j]) {
            num[o + 2 * n + j] = x;
            arg[f * 2 * n + 2 * j + 1] = v;
          }
        }
      }
      for (let j = 0; j < n; j++) num[o + j] /= Math.max(k, 1);
      num.fill(NaN, o + 3 * n, o + 5 * n);
    }
    d.fv = fv;
    d.fNum = num;
    d.fArg = arg;
  }

  /**
   * Whether facet f of d has a row nearly parallel to its hyperplane that is not slack by 1e-6 on
   * all of the hyperplane within d's box: the LP may drop such a row, and the overlap it sees
   * might then leave the box that pays for the proofs' residuals.
   */
  private doubtfulParallel(d: RegionData, f: number): boolean {
    if (d.fPar[f] >= 0) return d.fPar[f] === 1;
    const n = this.n;
    let parallel = false;
    const beta = d.b[f];
    for (let i = 0; i < d.m && !parallel; i++) {
      if (i === f) continue;
      let ra = 0;
      for (let j = 0; j < n; j++) ra += d.A[i * n + j] * d.A[f * n + j];
      if (d.sq[i] - ra * ra >= parallelSq) continue;
      // max of row·θ − b over the hyperplane within the box: ra·β + Σ|row − ra·a|_j·max|θ_j| − b
      let mx = ra * beta - d.b[i];
      for (let j = 0; j < n; j++) mx += Math.abs(d.A[i * n + j] - ra * d.A[f * n + j]) * d.big;
      parallel = mx >= -1e-6;
    }
    d.fPar[f] = parallel ? 1 : 0;
    return parallel;
  }

  /**
   * Projected lengths of d's rows on H (into `out`, 0 for row `skip` and rows the LP drops);
   * 'empty' when a row parallel to H excludes it (the LP path's null slice), 'band' when a row is
   * too near the LP's own threshold to tell.
   */
  private lengths(d: RegionData, skip: number, a: Float64Array, out: Float64Array): 'ok' | 'empty' | 'band' {
    const n = this.n;
    const { A, b, m } = d;
    for (let i = 0; i < m; i++) {
      if (i === skip) {
        out[i] = 0;
        continue;
      }
      let ra = 0;
      for (let j = 0; j < n; j++) ra += A[i * n + j] * a[j];
      let nn2 = d.sq[i] - ra * ra;
      if (nn2 < 1e-8) {
        // nearly parallel to H: the length again without cancellation
        nn2 = 0;
        for (let j = 0; j < n; j++) {
          const t = A[i * n + j] - ra * a[j];
          nn2 += t * t;
        }
      }
      const nn = Math.sqrt(nn2);
      if (nn < 1e-8) {
        // the LP path drops a row of projected length < 1e-9, or finds the hyperplane empty
        if (nn >= 1e-10) return 'band';
        let r0 = b[i];
        for (let j = 0; j < n; j++) r0 -= A[i * n + j] * this.origin[j];
        const limit = -tol.inside * 10;
        if (r0 < limit - 1e-12) return 'empty';
        if (r0 <= limit + 1e-12) return 'band';
        out[i] = 0;
        continue;
      }
      out[i] = nn;
    }
    return 'ok';
  }

  /** Length of row i of d projected on the hyperplane of unit normal a; 0 below 1e-8 (a row the LP may drop: never in a proof). */
  private lengthOn(d: RegionData, i: number, a: Float64Array): number {
    const n = this.n;
    let ra = 0;
    for (let j = 0; j < n; j++) ra += d.A[i * n + j] * a[j];
    let nn2 = d.sq[i] - ra * ra;
    if (nn2 < 1e-8) {
      nn2 = 0;
      for (let j = 0; j < n; j++) {
        const t = d.A[i * n + j] - ra * a[j];
        nn2 += t * t;
      }
    }
    const nn = Math.sqrt(nn2);
    return nn < 1e-8 ? 0 : nn;
  }

  /** Whether the mean of the vertices of facet f of d, moved onto H, is deeper than minPiece + 1e-9 inside every row of O. */
  private inside(d: RegionData, f: number, a: Float64Array, beta: number, DR: RegionData, DS: RegionData): boolean {
    const n = this.n;
    const p = this.p;
    const o = f * 9 * n;
    let off = -beta;
    for (let j = 0; j < n; j++) off += a[j] * d.fNum[o + j];
    for (let j = 0; j < n; j++) p[j] = d.fNum[o + j] - off * a[j];
    const deep = this.minPiece + 1e-9;
    return this.clearance(DR, this.nR, p, deep) > deep && this.clearance(DS, this.nS, p, deep) > deep;
  }

  /**
   * Whether a point found from the Chebyshev centres c_R, c_S of the two regions (one on each
   * side of H, each strictly inside its region) is deeper than minPiece + 1e-9 inside every row of
   * O: the point where the segment c_R → c_S crosses H, then each centre projected onto H (each
   * moved onto H). Where the points come from does not matter: the clearance test alone is the
   * proof (as for `inside`), so a stored centre that is off can only make it fail.
   */
  private centred(r: number, s: number, a: Float64Array, beta: number, DR: RegionData, DS: RegionData): boolean {
    const cR = this.regions[r].chebyshev?.center;
    const cS = this.regions[s].chebyshev?.center;
    const n = this.n;
    const p = this.p;
    const deep = this.minPiece + 1e-9;
    const test = (): boolean => {
      let off = -beta;
      for (let j = 0; j < n; j++) off += a[j] * p[j];
      for (let j = 0; j < n; j++) p[j] -= off * a[j];
      for (let j = 0; j < n; j++) if (!Number.isFinite(p[j])) return false;
      return this.clearance(DR, this.nR, p, deep) > deep && this.clearance(DS, this.nS, p, deep) > deep;
    };
    if (cR && cS) {
      let sR = -beta;
      let sS = -beta;
      for (let j = 0; j < n; j++) {
        sR += a[j] * cR[j];
        sS += a[j] * cS[j];
      }
      if (sR < 0 && sS > 0) {
        const t = -sR / (sS - sR);
        for (let j = 0; j < n; j++) p[j] = cR[j] + t * (cS[j] - cR[j]);
        if (test()) return true;
      }
    }
    for (const c of [cR, cS]) {
      if (!c) continue;
      for (let j = 0; j < n; j++) p[j] = c[j];
      if (test()) return true;
    }
    return false;
  }

  /**
   * Reject by two opposed rows (no vertices): a row i of R and a row q of S whose projections on H
   * (unit, `nR`/`nS`) are opposite up to e = p_i + p_q: on H, p_i·θ ≤ u_i and p_q·θ ≤ u_q, so
   * p_i·θ ≥ −u_q + e·θ ≥ −u_q − Σ|e_j|·max|θ_j| over R's padded box, which holds the overlap the LP
   * sees when R's facet has no doubtful parallel row (as for `reject`). A slab of width
   * u_i + u_q + Σ|e_j|·big (+ a round-off allowance) ≤ minPiece/2 holds no ball of radius over
   * minPiece/4: the LP says no. Typical of two regions diagonally across a ridge where H meets
   * another plane K that both have as a facet, reversed.
   */
  private opposedRows(DR: RegionData, f: number, DS: RegionData, a: Float64Array, beta: number): boolean {
    if (this.doubtfulParallel(DR, f)) return false;
    const n = this.n;
    if (this.proj.length < (DR.m + DS.m) * n) {
      this.proj = new Float64Array(2 * (DR.m + DS.m) * n);
      this.projU = new Float64Array(2 * (DR.m + DS.m));
    }
    const P = this.proj;
    const U = this.projU;
    const fill = (d: RegionData, len: Float64Array, at: number): void => {
      for (let i = 0; i < d.m; i++) {
        const o = (at + i) * n;
        if (len[i] === 0) {
          U[at + i] = NaN;
          continue;
        }
        let ra = 0;
        for (let j = 0; j < n; j++) ra += d.A[i * n + j] * a[j];
        for (let j = 0; j < n; j++) P[o + j] = (d.A[i * n + j] - ra * a[j]) / len[i];
        U[at + i] = (d.b[i] - ra * beta) / len[i];
      }
    };
    fill(DR, this.nR, 0);
    fill(DS, this.nS, DR.m);
    const big = DR.big;
    const half = 0.5 * this.minPiece;
    for (let i = 0; i < DR.m; i++) {
      const ui = U[i];
      if (!(ui === ui)) continue;
      for (let q = 0; q < DS.m; q++) {
        const uq = U[DR.m + q];
        if (!(uq === uq) || ui + uq > half) continue;
        let e = 0;
        for (let j = 0; j < n; j++) e += Math.abs(P[i * n + j] + P[(DR.m + q) * n + j]);
        const round = 1e-12 * (1 + Math.abs(ui) + Math.abs(uq) + big);
        if (ui + uq + e * big + round <= half) return true;
      }
    }
    return false;
  }

  /** Least distance from p (on H) to d's rows of O (projected lengths `len`), or some distance ≤ `enough` once one is. */
  private clearance(d: RegionData, len: Float64Array, p: Float64Array, enough: number): number {
    const n = this.n;
    let clear = Infinity;
    for (let i = 0; i < d.m && clear > enough; i++) {
      if (len[i] === 0) continue;
      let t = d.b[i];
      for (let j = 0; j < n; j++) t -= d.A[i * n + j] * p[j];
      clear = Math.min(clear, t / len[i]);
    }
    return clear;
  }

  /**
   * The reject certificates of a pair (true when one holds): the facets' proved boxes, then a
   * slab of S's rows over R's facet, then of R's rows over S's facet. Needs R's facet free of
   * doubtful parallel rows (`doubtfulParallel`).
   */
  private reject(DR: RegionData, hasR: boolean, f: number, DS: RegionData, hasS: boolean, g: number, a: Float64Array, beta: number): boolean {
    if (!hasR || this.doubtfulParallel(DR, f)) return false;
    if (hasS && this.boxApart(DR, f, DS, g, a)) {
      this.counts.boxes++;
      return true;
    }
    // the spare row of both regions: H (set after boxApart, whose proofs use each facet's own hyperplane)
    const n = this.n;
    for (const D of [DR, DS]) {
      const q = D.m + 2 * n;
      for (let j = 0; j < n; j++) D.A[q * n + j] = a[j];
      D.b[q] = beta;
    }
    if (this.slab(DS, g, DR, f, a, DR, true) || (hasS && this.slab(DR, f, DS, g, a, DR, false))) {
      this.counts.rejected++;
      return true;
    }
    return false;
  }

  /**
   * Whether O lies in a slab across one axis θ_j thinner than minPiece/2 in H's coordinates, from
   * proved sides of both facets' boxes: R's facet lies on H itself; S's on its own hyperplane,
   * which differs from H on R's box by at most Δ (interval arithmetic), paid for by |y_H|·Δ. The
   * residuals are paid for over R's box, which holds O. Only the axis where the vertices' boxes
   * overlap least (relative to the axis' length on H) is tried.
   */
  private boxApart(DR: RegionData, f: number, DS: RegionData, g: number, a: Float64Array): boolean {
    const n = this.n;
    const oR = f * 9 * n;
    const oS = g * 9 * n;
    const R = DR.fNum;
    const S = DS.fNum;
    let axis = -1;
    let least = Infinity;
    for (let j = 0; j < n; j++) {
      const nu2 = 1 - a[j] * a[j];
      if (nu2 < 0.01) continue; // θ_j hardly varies on H
      const w = (Math.min(R[oR + 2 * n + j], S[oS + 2 * n + j]) - Math.max(R[oR + n + j], S[oS + n + j])) / Math.sqrt(nu2);
      if (w < least) {
        least = w;
        axis = j;
      }
    }
    if (axis < 0 || least > 0.25 * this.minPiece) return false;
    const j = axis;
    const nu = Math.sqrt(1 - a[j] * a[j]);
    // Δ: |S_g·θ − s_g| over H ∩ R's box
    let dmax = -(DS.b[g] + DR.b[f]);
    let dmin = dmax;
    for (let t = 0; t < n; t++) {
      const cc = DS.A[g * n + t] + a[t];
      dmax += cc > 0 ? cc * DR.hi[t] : cc * DR.lo[t];
      dmin += cc > 0 ? cc * DR.lo[t] : cc * DR.hi[t];
    }
    const delta = Math.max(Math.abs(dmax), Math.abs(dmin));
    // the upper side from the facet whose vertices reach less far, the lower from the other
    const upR = R[oR + 2 * n + j] <= S[oS + 2 * n + j];
    const loR = R[oR + n + j] >= S[oS + n + j];
    const U = upR ? this.proved(DR, f, 2 * j, 0, DR.big) : this.proved(DS, g, 2 * j, delta, DR.big);
    if (U === Infinity) return false;
    const L = -(loR ? this.proved(DR, f, 2 * j + 1, 0, DR.big) : this.proved(DS, g, 2 * j + 1, delta, DR.big));
    return U - L <= 0.5 * nu * this.minPiece;
  }

  /**
   * Side `side` of the box of facet f of d (θ_j ≤ · for side 2j, −θ_j ≤ · for 2j + 1), over the
   * facet's own hyperplane moved by at most `delta` and points with |θ_j| ≤ `big`: side0 +
   * |y_H|·Δ + E·big, proved once by weak duality at the vertex where the side is reached (rows of
   * d tight there, not nearly parallel to the hyperplane; box rows left out, as the overlap need
   * not lie in d's box); +∞ when there is no proof.
   */
  private proved(d: RegionData, f: number, side: number, delta: number, big: number): number {
    const n = this.n;
    const o = f * 9 * n;
    if (Number.isNaN(d.fNum[o + 3 * n + side])) {
      d.fNum[o + 3 * n + side] = Infinity;
      const j = side >> 1;
      const up = (side & 1) === 0;
      const vert = d.fArg[f * 2 * n + 2 * j + (up ? 1 : 0)];
      const spare = d.m + 2 * n;
      for (let t = 0; t < n; t++) d.A[spare * n + t] = d.A[f * n + t];
      d.b[spare] = d.b[f];
      const T = this.tightRows;
      T.length = 0;
      const W = d.words;
      for (let w = 0; w < W; w++) {
        let x = d.T![vert * W + w];
        while (x !== 0) {
          const low = x & -x;
          const row = (w << 5) + (31 - Math.clz32(low));
          x ^= low;
          if (row === f || row >= d.m) continue;
          let ra = 0;
          for (let t = 0; t < n; t++) ra += d.A[row * n + t] * d.A[f * n + t];
          if (d.sq[row] - ra * ra >= parallelSq) T.push(row);
        }
      }
      const c = this.c;
      c.fill(0);
      c[j] = up ? 1 : -1;
      // the best of up to 32 (n − 1)-row subsets of the tight rows (one when the vertex is simple)
      const need = n - 1;
      if (T.length >= need) {
        const idx = this.subset;
        for (let i = 0; i < need; i++) idx[i] = i;
        let best = Infinity;
        for (let tries = 0; tries < 32; tries++) {
          const total = this.planeBound(c, d, T, idx, d);
          if (total < best) {
            best = total;
            d.fNum[o + 3 * n + side] = this.part0;
            d.fNum[o + 5 * n + side] = this.partY;
            d.fNum[o + 7 * n + side] = this.partE;
          }
          let i = need - 1;
          while (i >= 0 && idx[i] === T.length - need + i) i--;
          if (i < 0) break;
          idx[i]++;
          for (let q = i + 1; q < need; q++) idx[q] = idx[q - 1] + 1;
        }
      }
    }
    const side0 = d.fNum[o + 3 * n + side];
    if (side0 === Infinity) return Infinity;
    return side0 + d.fNum[o + 5 * n + side] * delta + d.fNum[o + 7 * n + side] * big;
  }

  /**
   * Whether a row of `rowsOf` (not `skip`) is proved to leave O a slab thinner than minPiece/2.
   * The row is sought over the vertices of facet `facetRow` of region `v`, and the proof's rows
   * among those tight at the vertex where the row is least (rows of v not parallel to H; v's box
   * rows only when `boxRows`, i.e. v is R, whose padded box holds O; H itself, the spare row).
   * The residual is paid for over R's padded box `boxOf`.
   */
  private slab(rowsOf: RegionData, skip: number, v: RegionData, facetRow: number, a: Float64Array, boxOf: RegionData, boxRows: boolean): boolean {
    const n = this.n;
    const half = 0.5 * this.minPiece;
    const X = v.X!;
    const k0 = v.fStart[facetRow];
    const k1 = v.fStart[facetRow + 1];
    // up to triesPerSide rows, nearest to separating first
    const best = this.best;
    const gaps = this.gaps;
    const ats = this.ats;
    const lens = this.lens;
    let nb = 0;
    for (let i = 0; i < rowsOf.m; i++) {
      if (i === skip) continue;
      // a row's length on H is ≤ 1, so a vertex below b − minPiece/2 is well inside
      const limit = rowsOf.b[i] - half;
      let least = Infinity;
      let at = -1;
      for (let k = k0; k < k1; k++) {
        const x = v.fv[k] * n;
        let t = 0;
        for (let j = 0; j < n; j++) t += rowsOf.A[i * n + j] * X[x + j];
        if (t < least) {
          least = t;
          at = v.fv[k];
          if (least < limit) break;
        }
      }
      if (least < limit) continue;
      const len = this.lengthOn(rowsOf, i, a);
      if (len === 0 || least < rowsOf.b[i] - half * len) continue;
      const gap = (rowsOf.b[i] - least) / len;
      let pos = nb;
      while (pos > 0 && gaps[pos - 1] > gap) pos--;
      if (pos >= triesPerSide) continue;
      for (let q = Math.min(nb, triesPerSide - 1); q > pos; q--) {
        best[q] = best[q - 1];
        gaps[q] = gaps[q - 1];
        ats[q] = ats[q - 1];
        lens[q] = lens[q - 1];
      }
      best[pos] = i;
      gaps[pos] = gap;
      ats[pos] = at;
      lens[pos] = len;
      if (nb < triesPerSide) nb++;
    }
    const W = v.words;
    const c = this.c;
    for (let t = 0; t < nb; t++) {
      const i = best[t];
      const vert = ats[t];
      const T = this.tightRows;
      T.length = 0;
      for (let w = 0; w < W; w++) {
        let x = v.T![vert * W + w];
        while (x !== 0) {
          const low = x & -x;
          const row = (w << 5) + (31 - Math.clz32(low));
          x ^= low;
          if (row === facetRow) continue;
          if (row < v.m ? this.lengthOn(v, row, a) > 0 : boxRows) T.push(row);
        }
      }
      // an upper bound U on −q·θ over O: then q·θ ≥ −U there
      for (let j = 0; j < n; j++) c[j] = -rowsOf.A[i * n + j];
      if (rowsOf.b[i] + this.tightBound(c, v, T, boxOf) <= half * lens[t]) return true;
    }
    return false;
  }

  /**
   * The least `planeBound` over the (n − 1)-row subsets of T (all of T when it has n − 1 rows,
   * else up to 32 subsets in lexicographic order); +∞ when none proves anything.
   */
  private tightBound(c: Float64Array, v: RegionData, T: number[], boxOf: RegionData): number {
    const n = this.n;
    const k = T.length;
    const need = n - 1;
    if (k < need) return Infinity;
    const idx = this.subset;
    for (let i = 0; i < need; i++) idx[i] = i;
    let best = Infinity;
    for (let tries = 0; tries < 32; tries++) {
      best = Math.min(best, this.planeBound(c, v, T, idx, boxOf));
      let i = need - 1;
      while (i >= 0 && idx[i] === k - need + i) i--;
      if (i < 0) break;
      idx[i]++;
      for (let j = i + 1; j < need; j++) idx[j] = idx[j - 1] + 1;
    }
    return best;
  }

  /**
   * Upper bound on c·θ over {θ : a·θ = β, A_W θ ≤ b_W} ∩ box, W = T[idx[0..n−1)] (rows of v), H
   * = v's spare row (a, β): weak duality (common practice) with y solving [A_W; a]ᵀ y = c, y ≥ 0 on
   * W (a multiplier zero up to round-off is set to 0) and of either sign on H, the residual paid for
   * over `boxOf`'s padded box; +∞ when the rows are dependent or a multiplier on W is negative.
   * Leaves the bound's parts in part0 (Σ y·b), partY (|y_H|), partE (Σ|residual|).
   */
  private planeBound(c: Float64Array, v: RegionData, T: number[], idx: Int32Array, boxOf: RegionData): number {
    const n = this.n;
    const M = this.scratch.m;
    const y = this.scratch.y;
    const plane = v.m + 2 * n;
    const rowOf = (i: number): number => (i < n - 1 ? T[idx[i]] : plane);
    for (let i = 0; i < n; i++) {
      const r = rowOf(i);
      for (let j = 0; j < n; j++) M[j * n + i] = v.A[r * n + j];
    }
    for (let j = 0; j < n; j++) y[j] = c[j];
    // solve M y = c (M = [A_W; a]ᵀ) by elimination with partial pivoting
    if (!luSolveInPlace(M, y, n, 1e-10)) return Infinity;
    let yScale = 0;
    for (let i = 0; i < n; i++) yScale = Math.max(yScale, Math.abs(y[i]));
    let bound = 0;
    for (let i = 0; i < n; i++) {
      if (i < n - 1 && !(y[i] >= 0)) {
        if (!(y[i] >= -1e-12 * yScale)) return Infinity;
        y[i] = 0;
      }
      bound += y[i] * v.b[rowOf(i)];
    }
    this.part0 = bound;
    this.partY = Math.abs(y[n - 1]);
    let E = 0;
    for (let j = 0; j < n; j++) {
      let e = c[j];
      for (let i = 0; i < n; i++) e -= v.A[rowOf(i) * n + j] * y[i];
      bound += e > 0 ? e * boxOf.hi[j] : e * boxOf.lo[j];
      E += Math.abs(e);
    }
    this.partE = E;
    return Number.isFinite(bound) ? bound : Infinity;
  }
}
