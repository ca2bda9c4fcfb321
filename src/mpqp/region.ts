import type { CriticalRegion, FacetInfo, MpqpProblem } from './types.js';
import { qpWorkspace, rowNonzeros, sortRows } from './pointqp.js';
import { dot2Start, spdInverse, spdScratch } from '../linalg/dense.js';
import { chebyshevBall, lpMaximizeFrom, lpReferenceMasked } from '../lp/kernel.js';
import { tol } from '../tol.js';
import { farkasBound, parallelBound, prefilterScratch } from './prefilter.js';
import { maxVertexDim, vertexPass, type VertexSet } from './vertices.js';
import { Arena } from '../util/arena.js';
import { kktSolver, refineKkt } from './kkt.js';

/**
 * buildRegion's work arrays, grown on demand (one set per thread): every entry read is written in
 * the same call first, and nothing in them outlives the call (stored rows, laws and vertices are
 * copies), so a region allocates only what it keeps.
 */
interface BuildScratch {
  inA: Uint8Array;
  Lth: Float64Array;
  lc: Float64Array;
  MAA: Float64Array;
  Zth: Float64Array;
  zc: Float64Array;
  Af: Float64Array;
  bf: Float64Array;
  kinds: Uint8Array;
  rowOf: Int32Array;
}
const bws: BuildScratch = {
  inA: new Uint8Array(0),
  Lth: new Float64Array(0),
  lc: new Float64Array(0),
  MAA: new Float64Array(0),
  Zth: new Float64Array(0),
  zc: new Float64Array(0),
  Af: new Float64Array(0),
  bf: new Float64Array(0),
  kinds: new Uint8Array(0),
  rowOf: new Int32Array(0),
};
function buildScratch(nc: number, nz: number, nt: number, k: number, mMax: number): BuildScratch {
  if (bws.inA.length < nc) bws.inA = new Uint8Array(2 * nc);
  if (bws.Lth.length < k * nt) bws.Lth = new Float64Array(2 * k * nt);
  if (bws.lc.length < k) bws.lc = new Float64Array(2 * k);
  if (bws.MAA.length < k * k) bws.MAA = new Float64Array(4 * k * k);
  if (bws.Zth.length < nz * nt) bws.Zth = new Float64Array(2 * nz * nt);
  if (bws.zc.length < nz) bws.zc = new Float64Array(2 * nz);
  if (bws.Af.length < mMax * nt) bws.Af = new Float64Array(2 * mMax * nt);
  if (bws.bf.length < mMax) {
    bws.bf = new Float64Array(2 * mMax);
    bws.kinds = new Uint8Array(2 * mMax);
    bws.rowOf = new Int32Array(2 * mMax);
  }
  return bws;
}
/** farkasBound's scratch for facetRowsByLp, made for nθ = pfScratchN (one per thread) */
let pfScratch: ReturnType<typeof prefilterScratch> | null = null;
let pfScratchN = -1;
/** the Gram matrix of a region's rows (facetRowsByLp; one per thread) */
let gramScratch = new Float64Array(0);
/**
 * Per-row work arrays of facetRowsByLp and facetRows2d (one set per thread, grown on demand): read
 * within one buildRegion call only (`alive` is returned to it and used before it returns), and every
 * entry read is written in the same call first. A typed array of more than 64 bytes with a buffer of
 * its own costs ~0.4 µs to make (arena.ts); these were most of a 5-D region's.
 */
const rowWork = { n: 0, alive: new Uint8Array(0), sure: new Uint8Array(0), skip: new Uint8Array(0), cut: new Uint8Array(0), slack: new Float64Array(0), rates: new Float64Array(0), at: new Int32Array(0) };
function rowScratch(m: number): typeof rowWork {
  if (rowWork.n < m) {
    const n = 2 * m;
    rowWork.n = n;
    rowWork.alive = new Uint8Array(n);
    rowWork.sure = new Uint8Array(n);
    rowWork.skip = new Uint8Array(n);
    rowWork.cut = new Uint8Array(n);
    rowWork.slack = new Float64Array(n);
    rowWork.rates = new Float64Array(n);
    rowWork.at = new Int32Array(n);
  }
  return rowWork;
}
/** spdInverse's work arrays for M_AA (its inverse is used at once, before the next region; one per thread) */
const invScratch = spdScratch();

export type RegionFailure = 'licq' | 'empty' | 'flat';
/** An axis-aligned box that holds the region (not stored in the table; feeds the exploration's spatial index). */
export interface BoundingBox {
  lo: Float64Array;
  hi: Float64Array;
}
/**
 * The vertices of a region with the rows tight at each, flat and owned by the caller: vertex v's θ
 * coordinates are x[v·nθ … v·nθ + nθ), its tight rows (ascending indices into the region's A)
 * t[tOff[v] … tOff[v + 1]). Not stored in the table.
 */
export interface RegionVertices {
  count: number;
  x: Float64Array;
  tOff: Int32Array;
  t: Int32Array;
}
export type RegionResult =
  | { ok: true; region: CriticalRegion; bbox: BoundingBox; /** the region's vertex list when the vertex pass made it exactly (nθ ≥ 3), else null */ verts: RegionVertices | null }
  | { ok: false; reason: RegionFailure };

export interface LpEngine {
  lps: number;
  reference: boolean;
  /** false: no LP-free redundancy proofs before the redundancy LPs (for measurement; off on the reference engine too) */
  proofs?: boolean;
}

/**
 * Critical region of one active set A (Bemporad, Morari, Dua & Pistikopoulos 2002):
 * λ_A(θ) = −M_AA⁻¹ (wc_A + S_A θ), z(θ) = −H⁻¹(Fθ + c) − K_A λ_A(θ); the region is where every
 * row off A is primal feasible and every multiplier on A is ≥ 0, inside the box. Rows are then
 * normalised, thinned (box-implied rows analytically, the rest by LP) and the Chebyshev ball found.
 */
export function buildRegion(problem: MpqpProblem, activeSet: number[], lp: LpEngine, lean = false): RegionResult {
  const ws = qpWorkspace(problem);
  const { nz, nc, ntheta: nt, lawSize } = problem;
  const { K, M, HinvF, S, Hinvc, wc } = ws;
  const k = activeSet.length;
  const mMax = nc + k + 2 * nt;
  const bw = buildScratch(nc, nz, nt, k, mMax);
  const inA = bw.inA;
  inA.fill(0, 0, nc);
  for (const i of activeSet) inA[i] = 1;
  // λ(θ) = Lθ θ + lc
  const Lth = bw.Lth;
  const lc = bw.lc;
  let inv: Float64Array | null = null;
  let refine = false;
  if (k > 0) {
    const MAA = bw.MAA;
    // the lower triangle and the diagonal only: all that spdInverse (and scaledInverse) read
    for (let a = 0; a < k; a++) {
      const ra = activeSet[a] * nc;
      for (let b = 0; b <= a; b++) MAA[a * k + b] = M[ra + activeSet[b]];
    }
    inv = spdInverse(MAA, k, tol.rank, invScratch) ?? scaledInverse(MAA, k);
    if (!inv) return { ok: false, reason: 'licq' };
    refine = scaledCondition(MAA, inv, k) > REFINE_CONDITION;
    // each entry one sum over b in ascending order; the sums of a row's θ columns and of its
    // constant run side by side (independent chains, the same bits as one at a time)
    // (the constant's sum rides along with the last θ column or pair: one pass less over the row)
    for (let a = 0; a < k; a++) {
      const ra = a * k;
      let sc = 0;
      let j = 0;
      for (; j + 1 < nt; j += 2) {
        let s0 = 0;
        let s1 = 0;
        if (j + 2 === nt)
          for (let b = 0; b < k; b++) {
            const v = inv[ra + b];
            const ab = activeSet[b];
            const o = ab * nt + j;
            s0 -= v * S[o];
            s1 -= v * S[o + 1];
            sc -= v * wc[ab];
          }
        else
          for (let b = 0; b < k; b++) {
            const v = inv[ra + b];
            const o = activeSet[b] * nt + j;
            s0 -= v * S[o];
            s1 -= v * S[o + 1];
          }
        Lth[a * nt + j] = s0;
        Lth[a * nt + j + 1] = s1;
      }
      if (j < nt) {
        let s0 = 0;
        for (let b = 0; b < k; b++) {
          const v = inv[ra + b];
          s0 -= v * S[activeSet[b] * nt + j];
          sc -= v * wc[activeSet[b]];
        }
        Lth[a * nt + j] = s0;
      } else if (nt === 0) for (let b = 0; b < k; b++) sc -= inv[ra + b] * wc[activeSet[b]];
      lc[a] = sc;
    }
  }
  // z(θ) = Zth θ + zc, each entry one sum over the active rows in order (θ columns side by side)
  const Zth = bw.Zth;
  const zc = bw.zc;
  for (let i = 0; i < nz; i++) {
    const ri = i * nc;
    let sc = -Hinvc[i];
    let j = 0;
    for (; j + 1 < nt; j += 2) {
      let s0 = -HinvF[i * nt + j];
      let s1 = -HinvF[i * nt + j + 1];
      if (j + 2 === nt)
        for (let a = 0; a < k; a++) {
          const v = K[ri + activeSet[a]];
          s0 -= v * Lth[a * nt + j];
          s1 -= v * Lth[a * nt + j + 1];
          sc -= v * lc[a];
        }
      else
        for (let a = 0; a < k; a++) {
          const v = K[ri + activeSet[a]];
          s0 -= v * Lth[a * nt + j];
          s1 -= v * Lth[a * nt + j + 1];
        }
      Zth[i * nt + j] = s0;
      Zth[i * nt + j + 1] = s1;
    }
    if (j < nt) {
      let s0 = -HinvF[i * nt + j];
      for (let a = 0; a < k; a++) {
        const v = K[ri + activeSet[a]];
        s0 -= v * Lth[a * nt + j];
        sc -= v * lc[a];
      }
      Zth[i * nt + j] = s0;
    } else if (nt === 0) for (let a = 0; a < k; a++) sc -= K[ri + activeSet[a]] * lc[a];
    zc[i] = sc;
  }
  if (refine) refineLaw(problem, activeSet, Lth, lc, Zth, zc);
  // half-spaces, normalised and written straight into the rows kept (`Af`, `bf`, `kinds`, `rowOf`):
  // a row implied by the box alone is dropped at once (no LP), so only the rows kept are stored and
  // only the region's facets become arrays of their own (per-row arrays were most of the garbage)
  const Af = bw.Af;
  const bf = bw.bf;
  const kinds = bw.kinds; // 0 primal, 1 dual, 2 box
  const rowOf = bw.rowOf;
  const lo = problem.box.lower;
  const up = problem.box.upper;
  let m = 0;
  /** Normalise the row in slot m (b its bound) and keep it unless the box implies it; false when it is a constant row that no θ satisfies. */
  const keep = (b: number, kind: number, row: number): boolean => {
    const o = m * nt;
    let n = 0;
    for (let j = 0; j < nt; j++) n += Af[o + j] * Af[o + j];
    n = Math.sqrt(n);
    if (n <= 1e-12) return b >= -tol.primal; // constant row: fine or empty
    let mx = 0;
    for (let j = 0; j < nt; j++) {
      const v = Af[o + j] / n;
      Af[o + j] = v;
      mx += Math.max(v * lo[j], v * up[j]);
    }
    const bn = b / n;
    if (mx <= bn + tol.redundancy) return true; // implied by the box alone
    bf[m] = bn;
    kinds[m] = kind;
    rowOf[m] = row;
    m++;
    return true;
  };
  const { G, E, w } = problem;
  const { ptr, idx, val } = rowNonzeros(problem);
  // the sums run over G_i's nonzeros in column order: the same partial sums as over every column,
  // since adding a zero product changes nothing but, at most, the sign of a zero sum; a sum that
  // ends at zero is redone over every column, so the rows keep their bits (zero signs included)
  let finite = true;
  for (let q = 0; q < nz * nt && finite; q++) finite = Number.isFinite(Zth[q]);
  for (let q = 0; q < nz && finite; q++) finite = Number.isFinite(zc[q]);
  for (let i = 0; i < nc; i++) {
    if (inA[i]) continue;
    // G_i z(θ) − w_i − E_i θ ≤ 0; each θ column's sum kept in its slot, the nonzeros in order
    const p0 = finite ? ptr[i] : 0;
    const p1 = finite ? ptr[i + 1] : 0;
    const o = m * nt;
    let c = -w[i];
    if (nt === 2) {
      // the same sums in two locals (no store per product)
      let s0 = -E[i * 2];
      let s1 = -E[i * 2 + 1];
      for (let p = p0; p < p1; p++) {
        const q = idx[p];
        const g = val[p];
        s0 += g * Zth[q * 2];
        s1 += g * Zth[q * 2 + 1];
        c += g * zc[q];
      }
      Af[o] = s0;
      Af[o + 1] = s1;
    } else if (nt === 4 || nt === 5) {
      // the same sums in locals (4-D and 5-D)
      const e = i * nt;
      let s0 = -E[e];
      let s1 = -E[e + 1];
      let s2 = -E[e + 2];
      let s3 = -E[e + 3];
      let s4 = nt === 5 ? -E[e + 4] : 0;
      for (let p = p0; p < p1; p++) {
        const q = idx[p];
        const g = val[p];
        const z = q * nt;
        s0 += g * Zth[z];
        s1 += g * Zth[z + 1];
        s2 += g * Zth[z + 2];
        s3 += g * Zth[z + 3];
        if (nt === 5) s4 += g * Zth[z + 4];
        c += g * zc[q];
      }
      Af[o] = s0;
      Af[o + 1] = s1;
      Af[o + 2] = s2;
      Af[o + 3] = s3;
      if (nt === 5) Af[o + 4] = s4;
    } else {
      for (let j = 0; j < nt; j++) Af[o + j] = -E[i * nt + j];
      for (let p = p0; p < p1; p++) {
        const q = idx[p];
        const g = val[p];
        for (let j = 0; j < nt; j++) Af[o + j] += g * Zth[q * nt + j];
        c += g * zc[q];
      }
    }
    for (let j = 0; j < nt; j++) {
      if (Af[o + j] !== 0 && finite) continue;
      let t = -E[i * nt + j];
      for (let q = 0; q < nz; q++) t += G[i * nz + q] * Zth[q * nt + j];
      Af[o + j] = t;
    }
    if (c === 0 || !finite) {
      c = -w[i];
      for (let q = 0; q < nz; q++) c += G[i * nz + q] * zc[q];
    }
    if (!keep(-c, 0, i)) return { ok: false, reason: 'empty' };
  }
  for (let p = 0; p < k; p++) {
    // −λ_p(θ) ≤ 0
    const o = m * nt;
    for (let j = 0; j < nt; j++) Af[o + j] = -Lth[p * nt + j];
    if (!keep(lc[p], 1, activeSet[p])) return { ok: false, reason: 'empty' };
  }
  for (let j = 0; j < nt; j++) {
    // θ_j ≤ up_j, then −θ_j ≤ −lo_j (slot m may hold a dropped row: cleared)
    Af.fill(0, m * nt, (m + 2) * nt);
    Af[m * nt + j] = 1;
    bf[m] = up[j];
    kinds[m] = 2;
    rowOf[m++] = j;
    Af[m * nt + j] = -1;
    bf[m] = -lo[j];
    kinds[m] = 2;
    rowOf[m++] = j;
  }
  const start = new Float64Array(nt);
  let width = 0;
  for (let j = 0; j < nt; j++) {
    start[j] = 0.5 * (lo[j] + up[j]);
    width = Math.max(width, up[j] - lo[j]);
  }
  lp.lps++;
  const ball = chebyshevBall(Af, bf, m, nt, start, width);
  if (!(ball.radius > tol.radius)) return { ok: false, reason: 'flat' };
  const thin = nt === 2 ? facetRows2d(Af, bf, m, lo, up) : facetRowsByLp(Af, bf, m, nt, ball.center, lp, lo, up);
  if (!thin) return { ok: false, reason: 'flat' };
  const alive = thin.alive;
  const A: number[][] = [];
  const b: number[] = [];
  const facets: FacetInfo[] = [];
  const verts = thin.verts ? regionVertices(thin.verts, alive, m) : null;
  for (let r = 0; r < m; r++) {
    if (!alive[r]) continue;
    const row = new Array<number>(nt);
    for (let j = 0; j < nt; j++) row[j] = Af[r * nt + j];
    A.push(row);
    b.push(bf[r]);
    facets.push({ kind: kindNames[kinds[r]], row: rowOf[r], neighbours: [] });
  }
  // the affine law as arrays; unless lean, the whole move sequence and the value function packed
  // in one view of a shared block (`packMovesValue`), read as arrays through accessors
  const lawF: number[][] = [];
  for (let i = 0; i < lawSize; i++) {
    const row = new Array<number>(nt);
    for (let j = 0; j < nt; j++) row[j] = Zth[i * nt + j];
    lawF.push(row);
  }
  const lawG = new Array<number>(lawSize);
  for (let i = 0; i < lawSize; i++) lawG[i] = zc[i];
  // id first (−1 until the caller numbers it): the keys in the order of the table
  const region: CriticalRegion = {
    id: -1,
    activeSet: sortRows(activeSet.slice()),
    A,
    b,
    facets,
    chebyshev: { center: plainCopy(ball.center, nt), radius: ball.radius },
    law: { F: lawF, g: lawG },
  };
  if (!lean) {
    const P = keptArena.f64(nz * (nt + 1) + nt * nt + nt + 1);
    P.set(Zth.subarray(0, nz * nt));
    P.set(zc.subarray(0, nz), nz * nt);
    valueFunction(problem, Zth, zc, P, nz * (nt + 1));
    packMovesValue(region, P);
  }
  return { ok: true, region, bbox: thin.bbox, verts };
}

/**
 * The doubles a full region keeps besides its rows and law, packed: moves F (nz × nθ, row-major),
 * moves g (nz), value Q (nθ × nθ), q (nθ), r — the order of a RegionStore record. Views of 1 MiB
 * blocks (one arena per thread): a region's move sequence as nz arrays of nθ numbers was most of
 * what it kept on the heap (~3.4 kB of ~6 kB per region on a 2-D problem with nz = 40), all of it
 * copied twice by the young-generation collector while the exploration runs.
 */
const keptArena = new Arena();
/** The packed doubles of a full region built here (non-enumerable: spread, JSON and Object.keys skip it). */
export const PACKED_TAIL: unique symbol = Symbol('tessera.packedTail');
type PackedRegion = CriticalRegion & { [PACKED_TAIL]?: Float64Array };

/** `rows` rows of n numbers from P at `at` (plain arrays). */
function rowsOf(P: Float64Array, at: number, rows: number, n: number): number[][] {
  const out: number[][] = [];
  for (let i = 0; i < rows; i++) {
    const row = new Array<number>(n);
    for (let j = 0; j < n; j++) row[j] = P[at + i * n + j];
    out.push(row);
  }
  return out;
}
function plainSlice(P: Float64Array, at: number, n: number): number[] {
  const out = new Array<number>(n);
  for (let j = 0; j < n; j++) out[j] = P[at + j];
  return out;
}
/** nz of a packed tail of length len for nθ = nt */
export const packedNz = (len: number, nt: number): number => (len - nt * nt - nt - 1) / (nt + 1);
/** `moves` of a packed region: new arrays on every read (the same numbers) */
function readMoves(this: PackedRegion): CriticalRegion['moves'] {
  const P = this[PACKED_TAIL]!;
  const nt = this.chebyshev.center.length;
  const nz = packedNz(P.length, nt);
  return { F: rowsOf(P, 0, nz, nt), g: plainSlice(P, nz * nt, nz) };
}
/** `value` of a packed region: new arrays on every read (the same numbers) */
function readValue(this: PackedRegion): CriticalRegion['value'] {
  const P = this[PACKED_TAIL]!;
  const nt = this.chebyshev.center.length;
  const at = packedNz(P.length, nt) * (nt + 1);
  return { Q: rowsOf(P, at, nt, nt), q: plainSlice(P, at + nt * nt, nt), r: P[at + nt * nt + nt] };
}
/** Writing `moves` (or `value`) makes both plain data members in place (same keys, same order), the other keeping its numbers. */
function writeMoves(this: PackedRegion, v: CriticalRegion['moves']): void {
  const value = this.value;
  Object.defineProperty(this, 'moves', { value: v, writable: true, enumerable: true, configurable: true });
  Object.defineProperty(this, 'value', { value, writable: true, enumerable: true, configurable: true });
  delete this[PACKED_TAIL];
}
function writeValue(this: PackedRegion, v: CriticalRegion['value']): void {
  const moves = this.moves;
  Object.defineProperty(this, 'moves', { value: moves, writable: true, enumerable: true, configurable: true });
  Object.defineProperty(this, 'value', { value: v, writable: true, enumerable: true, configurable: true });
  delete this[PACKED_TAIL];
}

/**
 * Give a region `moves` and `value` read from its packed doubles: own enumerable accessors (the
 * same getter functions for every region, so the regions share one hidden class), reached by
 * JSON.stringify, spread, structured clone and Object.keys as data members would be; a write
 * turns them into plain data members.
 */
function packMovesValue(region: CriticalRegion, P: Float64Array): void {
  Object.defineProperty(region, PACKED_TAIL, { value: P, writable: true, enumerable: false, configurable: true });
  Object.defineProperty(region, 'moves', { get: readMoves, set: writeMoves, enumerable: true, configurable: true });
  Object.defineProperty(region, 'value', { get: readValue, set: writeValue, enumerable: true, configurable: true });
}

/** The packed moves and value of a region built here (moves F, g, value Q, q, r), or undefined. */
export function packedTail(R: CriticalRegion): Float64Array | undefined {
  return (R as PackedRegion)[PACKED_TAIL];
}

const kindNames: readonly FacetInfo['kind'][] = ['primal', 'dual', 'box'];

/** The first n entries of a typed array as a plain array (Array.from goes through the iterator). */
function plainCopy(a: Float64Array, n: number): number[] {
  const out: number[] = [];
  for (let j = 0; j < n; j++) out.push(a[j]);
  return out;
}

/**
 * The regions' vertex lists (`regionVertices`): views of shared 64 kB blocks (arena.ts), one per
 * thread. A list is dropped once its region's facets are covered, and regions are covered in about
 * the order they are found, so a block is freed soon after the regions that used it are done.
 */
const vertsArena = new Arena(1 << 16);

/** The vertex pass's list (its reused set: copied here) with its tight rows renumbered to the rows kept (rows not kept, box sides the region only touches, left out). */
function regionVertices(V: VertexSet, alive: Uint8Array, m: number): RegionVertices {
  const at = rowScratch(m).at;
  let n = 0;
  for (let r = 0; r < m; r++) at[r] = alive[r] ? n++ : -1;
  const cnt = V.count;
  const TO = V.tOff;
  const T = V.t;
  let len = 0;
  for (let i = 0; i < TO[cnt]; i++) if (at[T[i]] >= 0) len++;
  const t = vertsArena.i32(len);
  const tOff = vertsArena.i32(cnt + 1);
  len = 0;
  for (let v = 0; v < cnt; v++) {
    for (let i = TO[v]; i < TO[v + 1]; i++) if (at[T[i]] >= 0) t[len++] = at[T[i]];
    tOff[v + 1] = len;
  }
  const x = vertsArena.f64(cnt * V.n);
  for (let q = 0; q < cnt * V.n; q++) x[q] = V.x[q];
  return { count: cnt, x, tOff, t };
}

/** H·Z of valueFunction (one per thread) */
let hzScratch = new Float64Array(0);
/** scaledInverse's diagonal scaling and scaled block (one per thread) */
let scaleD = new Float64Array(0);
let scaleS = new Float64Array(0);

/** J*(θ) = ½zᵀHz + (Fθ + c)ᵀz + ½θᵀYθ with z = Zθ + zc, written as θᵀQθ + qᵀθ + r: Q (row-major), q and r written to out[at …]. */
function valueFunction(problem: MpqpProblem, Z: Float64Array, zc: Float64Array, out: Float64Array, at: number): void {
  const { nz, ntheta: nt, H, F, Y, c } = problem;
  // every entry written below before it is read; nothing of it outlives the call
  if (hzScratch.length < nz * nt) hzScratch = new Float64Array(2 * nz * nt);
  const HZ = hzScratch;
  let i0 = 0;
  // two rows and two θ columns side by side: four independent sums over q, each in ascending order
  // (the same bits as one at a time; the processor overlaps the chains)
  for (; i0 + 1 < nz; i0 += 2) {
    const r0 = i0 * nz;
    const r1 = r0 + nz;
    let j = 0;
    for (; j + 1 < nt; j += 2) {
      let s00 = 0;
      let s01 = 0;
      let s10 = 0;
      let s11 = 0;
      for (let q = 0; q < nz; q++) {
        const h0 = H[r0 + q];
        const h1 = H[r1 + q];
        const z0 = Z[q * nt + j];
        const z1 = Z[q * nt + j + 1];
        s00 += h0 * z0;
        s01 += h0 * z1;
        s10 += h1 * z0;
        s11 += h1 * z1;
      }
      HZ[i0 * nt + j] = s00;
      HZ[i0 * nt + j + 1] = s01;
      HZ[(i0 + 1) * nt + j] = s10;
      HZ[(i0 + 1) * nt + j + 1] = s11;
    }
    if (j < nt) {
      let s0 = 0;
      let s1 = 0;
      for (let q = 0; q < nz; q++) {
        const z = Z[q * nt + j];
        s0 += H[r0 + q] * z;
        s1 += H[r1 + q] * z;
      }
      HZ[i0 * nt + j] = s0;
      HZ[(i0 + 1) * nt + j] = s1;
    }
  }
  for (let i = i0; i < nz; i++) {
    // the last row (nz odd): two θ columns side by side
    let j = 0;
    for (; j + 1 < nt; j += 2) {
      let s0 = 0;
      let s1 = 0;
      for (let q = 0; q < nz; q++) {
        const h = H[i * nz + q];
        s0 += h * Z[q * nt + j];
        s1 += h * Z[q * nt + j + 1];
      }
      HZ[i * nt + j] = s0;
      HZ[i * nt + j + 1] = s1;
    }
    if (j < nt) {
      let s = 0;
      for (let q = 0; q < nz; q++) s += H[i * nz + q] * Z[q * nt + j];
      HZ[i * nt + j] = s;
    }
  }
  // Q row-major at out[at …], then q, then r
  for (let i = 0; i < nt; i++) {
    for (let j = 0; j < nt; j++) {
      let zhz = 0;
      let zf = 0;
      let fz = 0;
      for (let q = 0; q < nz; q++) {
        zhz += Z[q * nt + i] * HZ[q * nt + j];
        zf += Z[q * nt + i] * F[q * nt + j];
        fz += Z[q * nt + j] * F[q * nt + i];
      }
      out[at + i * nt + j] = 0.5 * zhz + 0.5 * (zf + fz) + 0.5 * Y[i * nt + j];
    }
  }
  for (let j = 0; j < nt; j++) {
    let s = 0;
    for (let i = 0; i < nz; i++) s += zc[i] * (HZ[i * nt + j] + F[i * nt + j]) + c[i] * Z[i * nt + j];
    out[at + nt * nt + j] = s;
  }
  let r = 0;
  for (let i = 0; i < nz; i++) {
    r += c[i] * zc[i];
    const hz = 0.5 * zc[i]; // (0.5·zc_i)·H_ip·zc_p, left to right as before
    for (let p = 0; p < nz; p++) r += hz * H[i * nz + p] * zc[p];
  }
  out[at + nt * nt + nt] = r;
}

/**
 * A ray from the interior centre meets row q at slack_q / rate_q, where rate_q = a_q·direction is
 * read from `rates[off + q]`: the row met first (alone, not tied within 1e-12 relative) is certainly a
 * facet, and is marked in `sure`.
 */
function markFirstHit(rates: Float64Array, off: number, slack: Float64Array, m: number, sure: Uint8Array): void {
  let best = Infinity;
  let hit = -1;
  let tie = false;
  for (let q = 0; q < m; q++) {
    const ad = rates[off + q];
    if (ad <= 1e-12) continue;
    const t = slack[q] / ad;
    if (hit < 0 || t < best - 1e-12 * (1 + best)) {
      best = t;
      hit = q;
      tie = false;
    } else if (Math.abs(t - best) <= 1e-12 * (1 + best)) tie = true;
  }
  if (hit >= 0 && !tie) sure[hit] = 1;
}

/**
 * Non-redundant rows by LP: row r is redundant when max a_r θ over the other live rows ≤ b_r.
 * 1. Rays shot from the interior centre along every row normal (and, without the vertex pass, every
 *    axis and 8·nθ fixed directions) mark the rows hit first: certainly facets, no LP.
 * 1b. With the proofs on, the vertex pass (vertices.ts): the vertices of the sure rows' polytope
 *    aim rays that find the other facets (each with a witness point proving its LP would keep it),
 *    and weak duality at the best vertex drops redundant rows and proves box sides; what it cannot
 *    settle goes on below. Typically only the Chebyshev LP is left (boom-4d-n8: 1.7 LPs/region).
 * 2. The bounding box of the polytope of those sure rows (and the box rows) by 2·nθ small LPs
 *    holds the region; a row whose maximum over that box is within its bound is redundant, no LP.
 *    The same box is the region's bounding box for the spatial index.
 *    A box side whose objective lies in the normal cone of an earlier side's optimal basis (whose
 *    vertex keeps every row of this LP) takes that vertex without an LP (LP duality).
 * 3. For each row left, LP-free proofs first (prefilter.ts): a live row with nearly the same normal
 *    bounds it over the box, or the optimal basis of an LP solved earlier for this region proves it
 *    by weak duality; only rows no proof settles get one LP over the live rows, whose basis joins
 *    the proofs. Proofs only ever drop a row, and only by a bound ≥ the LP's own value, so the rows
 *    kept are those the LPs alone keep (the `lp: 'reference'` path runs without them).
 */
function facetRowsByLp(Af: Float64Array, bf: Float64Array, m: number, nt: number, center: Float64Array, lp: LpEngine, lo: Float64Array, up: Float64Array): { alive: Uint8Array; bbox: BoundingBox; verts: VertexSet | null } {
  const rw = rowScratch(m);
  const alive = rw.alive;
  alive.fill(1, 0, m);
  const sure = rw.sure;
  sure.fill(0, 0, m);
  const proofs = !lp.reference && lp.proofs !== false;
  const slack = rw.slack;
  for (let q = 0; q < m; q++) {
    let s = bf[q];
    for (let j = 0; j < nt; j++) s -= Af[q * nt + j] * center[j];
    slack[q] = s;
  }
  const dir = new Float64Array(nt);
  const rates = rw.rates;
  const shoot = (): void => {
    for (let q = 0; q < m; q++) {
      let ad = 0;
      for (let j = 0; j < nt; j++) ad += Af[q * nt + j] * dir[j];
      rates[q] = ad;
    }
    markFirstHit(rates, 0, slack, m, sure);
  };
  // rays along every row normal: the ray of row r meets row q at slack_q / (a_q·a_r), and a_q·a_r is
  // a_r·a_q bit for bit (the same products summed in the same order), so each product is formed once
  if (gramScratch.length < m * m) gramScratch = new Float64Array(2 * m * m);
  const gram = gramScratch;
  if (nt === 4 || nt === 5) {
    // the same sums written out (0 + a_q0·a_r0 + …, in axis order), row r's entries held in locals
    for (let r = 0; r < m; r++) {
      const o = r * nt;
      const r0 = Af[o];
      const r1 = Af[o + 1];
      const r2 = Af[o + 2];
      const r3 = Af[o + 3];
      const r4 = nt === 5 ? Af[o + 4] : 0;
      for (let q = r; q < m; q++) {
        const p = q * nt;
        let g = 0;
        g += Af[p] * r0;
        g += Af[p + 1] * r1;
        g += Af[p + 2] * r2;
        g += Af[p + 3] * r3;
        if (nt === 5) g += Af[p + 4] * r4;
        gram[r * m + q] = g;
        gram[q * m + r] = g;
      }
    }
  } else
    for (let r = 0; r < m; r++)
      for (let q = r; q < m; q++) {
        let g = 0;
        for (let j = 0; j < nt; j++) g += Af[q * nt + j] * Af[r * nt + j];
        gram[r * m + q] = g;
        gram[q * m + r] = g;
      }
  for (let r = 0; r < m; r++) markFirstHit(gram, r * m, slack, m, sure);
  const useVertices = proofs && nt <= maxVertexDim;
  for (let j = 0; j < nt && !useVertices; j++)
    for (const sgn of [1, -1]) {
      dir.fill(0);
      dir[j] = sgn;
      shoot();
    }
  // and along fixed pseudo-random directions (a seeded generator: the same rays for every region)
  let seed = 0x9e3779b9;
  for (let k = 0; k < 8 * nt && !useVertices; k++) {
    for (let j = 0; j < nt; j++) {
      seed = (Math.imul(seed, 1664525) + 1013904223) >>> 0;
      dir[j] = seed / 4294967296 - 0.5;
    }
    shoot();
  }
  // Bounding box of the region, after Clarkson's outer-approximation idea: maximise ±θ_j over the
  // sure rows (and the box rows, the last 2·nθ); when the maximiser breaks another row, the row
  // first hit on the segment from the centre to it is a facet: mark it sure and solve again. Each
  // box side ends exact, with one LP per side plus one per facet found this way.
  const bbLo = Float64Array.from(lo);
  const bbHi = Float64Array.from(up);
  if (pfScratchN !== nt) {
    pfScratch = prefilterScratch(nt);
    pfScratchN = nt;
  }
  const scratch = pfScratch!;
  const c = new Float64Array(nt);
  // LP-free pass over the vertices of the sure rows (vertices.ts): facets found by rays aimed at
  // vertices that break a row, redundant rows and box sides proved by weak duality at a vertex
  const sideKnown = new Uint8Array(2 * nt);
  const V = useVertices ? vertexPass(Af, bf, m, nt, lo, up, center, slack, sure, alive, sideKnown, bbLo, bbHi, scratch, tol.redundancy) : null;
  // the rows V was cut by (sure now, box sides aside): V is the region's vertex list when the rows kept at the end are among them
  let cut: Uint8Array | null = null;
  if (V) {
    cut = rw.cut;
    for (let q = 0; q < m - 2 * nt; q++) cut[q] = sure[q];
  }
  const skip = rw.skip;
  for (let q = 0; q < m; q++) skip[q] = sure[q] || q >= m - 2 * nt ? 0 : 1;
  // optimal bases of the LPs solved here, with their vertices: dual certificates to reuse (prefilter.ts)
  const bases: { W: Int32Array; x: Float64Array }[] = [];
  const keepBasis = (res: { working?: number[]; x: Float64Array }): void => {
    if (res.working && res.working.length === nt) bases.push({ W: Int32Array.from(res.working), x: res.x.slice(0, nt) });
  };
  /** a proof without LP that row r is implied by the live rows other than r (prefilter.ts), or false */
  const provenRedundant = (r: number): boolean => {
    const ar = Af.subarray(r * nt, (r + 1) * nt);
    const br = bf[r] + tol.redundancy;
    for (let q = 0; q < m; q++) {
      if (q === r || !alive[q]) continue;
      let d = 0;
      for (let j = 0; j < nt; j++) d += Math.abs(ar[j] - Af[q * nt + j]);
      if (d < 1e-3 && parallelBound(ar, Af, bf, q, nt, bbLo, bbHi) <= br) return true;
    }
    for (let k = bases.length - 1; k >= 0; k--) {
      const { W, x } = bases[k];
      let ok = true;
      for (let i = 0; i < nt && ok; i++) ok = alive[W[i]] === 1 && W[i] !== r;
      if (!ok) continue;
      let ax = 0;
      for (let j = 0; j < nt; j++) ax += ar[j] * x[j];
      if (ax > br) continue; // the basis's vertex breaks the row: this basis cannot prove it
      if (farkasBound(ar, Af, bf, W, nt, bbLo, bbHi, scratch) <= br) return true;
    }
    return false;
  };
  /**
   * A box side without LP: an earlier optimal basis W of rows kept in this LP whose vertex satisfies
   * every kept row and whose normal cone holds c is optimal for c too (LP duality); its vertex is the
   * maximiser and the certificate's bound the value.
   */
  const sideFromBases = (cv: Float64Array, skipped: Uint8Array): { status: 'optimal'; x: Float64Array; value: number } | null => {
    for (let k = bases.length - 1; k >= 0; k--) {
      const { W, x } = bases[k];
      let ok = true;
      for (let i = 0; i < nt && ok; i++) ok = skipped[W[i]] === 0;
      for (let q = 0; q < m && ok; q++) {
        if (skipped[q]) continue;
        let s = -bf[q];
        for (let j = 0; j < nt; j++) s += Af[q * nt + j] * x[j];
        ok = s <= tol.primal;
      }
      if (!ok) continue;
      const bound = farkasBound(cv, Af, bf, W, nt, bbLo, bbHi, scratch);
      if (bound < Infinity) return { status: 'optimal', x, value: bound };
    }
    return null;
  };
  for (let j = 0; j < nt; j++)
    for (const sgn of [1, -1]) {
      if (sideKnown[2 * j + (sgn > 0 ? 0 : 1)]) continue;
      c.fill(0);
      c[j] = sgn;
      let value = Infinity;
      for (let round = 0; round <= m; round++) {
        const known = proofs ? sideFromBases(c, skip) : null;
        if (!known) lp.lps++;
        const res = known ?? (lp.reference ? lpReferenceMasked(c, Af, bf, m, nt, skip, 0) : lpMaximizeFrom(c, Af, bf, m, nt, center, skip));
        if (res.status !== 'optimal') break;
        value = res.value;
        if (!known) keepBasis(res);
        for (let q = 0; q < nt; q++) dir[q] = res.x[q] - center[q];
        let first = -1;
        let tFirst = 1 - 1e-12;
        let tie = false;
        for (let q = 0; q < m; q++) {
          if (!skip[q]) continue;
          let ad = 0;
          for (let k = 0; k < nt; k++) ad += Af[q * nt + k] * dir[k];
          if (ad <= 1e-12) continue;
          const t = slack[q] / ad;
          if (t < tFirst - 1e-12) {
            tFirst = t;
            first = q;
            tie = false;
          } else if (t <= tFirst + 1e-12) tie = true;
        }
        if (first < 0 || tie) break; // the maximiser keeps every row (this side is exact), or a tie: keep the outer bound
        sure[first] = 1;
        skip[first] = 0;
      }
      if (!Number.isFinite(value)) continue;
      if (sgn > 0) bbHi[j] = Math.min(bbHi[j], value + tol.redundancy);
      else bbLo[j] = Math.max(bbLo[j], -value - tol.redundancy);
    }
  for (let r = 0; r < m; r++) {
    if (sure[r]) continue;
    let mx = 0;
    for (let j = 0; j < nt; j++) {
      const a = Af[r * nt + j];
      mx += a > 0 ? a * bbHi[j] : a * bbLo[j];
    }
    if (mx <= bf[r] - tol.redundancy) alive[r] = 0;
  }
  for (let r = 0; r < m; r++) {
    if (sure[r] || !alive[r]) continue;
    if (proofs && provenRedundant(r)) {
      alive[r] = 0;
      continue;
    }
    for (let q = 0; q < m; q++) skip[q] = alive[q] ? 0 : 1;
    skip[r] = 1;
    for (let j = 0; j < nt; j++) c[j] = Af[r * nt + j];
    lp.lps++;
    const res = lp.reference
      ? lpReferenceMasked(c, Af, bf, m, nt, skip, 0)
      : lpMaximizeFrom(c, Af, bf, m, nt, center, skip);
    if (res.status === 'optimal') keepBasis(res);
    if (res.status === 'optimal' && res.value <= bf[r] + tol.redundancy) alive[r] = 0;
  }
  let exact = cut !== null;
  for (let r = 0; r < m - 2 * nt && exact; r++) exact = !alive[r] || cut![r] === 1;
  return { alive, bbox: { lo: bbLo, hi: bbHi }, verts: exact ? V : null };
}

/**
 * Exact non-redundant rows in 2-D: clip the box polygon by every half-plane (Sutherland–Hodgman,
 * exact for convex polygons); a row is a facet when it supports an edge longer than tol.radius.
 * Duplicate rows supporting the same edge keep the first one. Null when the polygon is flat.
 */
/** facetRows2d's polygon, two buffers of vertices (x, y, the row of the edge leaving it) swapped per cut; one set per thread */
let p2x = new Float64Array(0);
let p2y = new Float64Array(0);
let p2e = new Int32Array(0);
let q2x = new Float64Array(0);
let q2y = new Float64Array(0);
let q2e = new Int32Array(0);
function facetRows2d(Af: Float64Array, bf: Float64Array, m: number, lo: Float64Array, up: Float64Array): { alive: Uint8Array; bbox: BoundingBox; verts: VertexSet | null } | null {
  // vertices with the row that made the edge leaving each vertex (−1: not from a row yet), in
  // typed buffers (a cut makes at most one vertex more, so m + 4 suffice); the arithmetic is that
  // of one object per vertex, in the same order
  if (p2x.length < m + 4) {
    const n = 2 * (m + 4);
    p2x = new Float64Array(n);
    p2y = new Float64Array(n);
    p2e = new Int32Array(n);
    q2x = new Float64Array(n);
    q2y = new Float64Array(n);
    q2e = new Int32Array(n);
  }
  let px = p2x;
  let py = p2y;
  let pe = p2e;
  let nx = q2x;
  let ny = q2y;
  let ne = q2e;
  // the box rows are the last four of buildRegion's: x ≤ up0 (m − 4), −x ≤ −lo0, y ≤ up1, −y ≤ −lo1 (m − 1)
  const firstBox = m - 4;
  // the box's corners, each with the edge leaving it: bottom −y ≤ −lo1, right x ≤ up0, top y ≤ up1, left −x ≤ −lo0
  px[0] = px[3] = lo[0];
  px[1] = px[2] = up[0];
  py[0] = py[1] = lo[1];
  py[2] = py[3] = up[1];
  pe[0] = m - 1;
  pe[1] = m - 4;
  pe[2] = m - 2;
  pe[3] = m - 3;
  let k = 4;
  for (let r = 0; r < firstBox; r++) {
    const a0 = Af[2 * r];
    const a1 = Af[2 * r + 1];
    const br = bf[r];
    if (2 * k > nx.length) {
      // a cut adds at most one vertex to a convex polygon, but the tolerance test on nearly
      // collinear vertices could add more: never fewer slots than two per edge
      const cap = 4 * k;
      const gx = new Float64Array(cap);
      const gy = new Float64Array(cap);
      const ge = new Int32Array(cap);
      gx.set(px.subarray(0, k));
      gy.set(py.subarray(0, k));
      ge.set(pe.subarray(0, k));
      p2x = px = gx;
      p2y = py = gy;
      p2e = pe = ge;
      q2x = nx = new Float64Array(cap);
      q2y = ny = new Float64Array(cap);
      q2e = ne = new Int32Array(cap);
    }
    let n = 0;
    for (let i = 0; i < k; i++) {
      const j = i + 1 === k ? 0 : i + 1;
      const Px = px[i];
      const Py = py[i];
      const Qx = px[j];
      const Qy = py[j];
      const sp = a0 * Px + a1 * Py - br;
      const sq = a0 * Qx + a1 * Qy - br;
      const pin = sp <= tol.redundancy;
      const qin = sq <= tol.redundancy;
      if (pin) {
        nx[n] = Px;
        ny[n] = Py;
        ne[n++] = pe[i];
      }
      if (pin !== qin) {
        const t = sp / (sp - sq);
        // entering the half-plane: the new vertex starts the edge P→Q's remainder; leaving: it starts an edge on row r
        nx[n] = Px + t * (Qx - Px);
        ny[n] = Py + t * (Qy - Py);
        ne[n++] = pin ? r : pe[i];
      }
    }
    const tx = px;
    const ty = py;
    const te = pe;
    px = nx;
    py = ny;
    pe = ne;
    nx = tx;
    ny = ty;
    ne = te;
    k = n;
    if (k < 3) return null;
  }
  const alive = rowScratch(m).alive;
  alive.fill(0, 0, m);
  for (let i = 0; i < k; i++) {
    const j = i + 1 === k ? 0 : i + 1;
    if (Math.hypot(px[j] - px[i], py[j] - py[i]) > tol.radius && pe[i] >= 0) alive[pe[i]] = 1;
  }
  const bbLo = Float64Array.of(Infinity, Infinity);
  const bbHi = Float64Array.of(-Infinity, -Infinity);
  for (let i = 0; i < k; i++) {
    bbLo[0] = Math.min(bbLo[0], px[i] - tol.redundancy);
    bbLo[1] = Math.min(bbLo[1], py[i] - tol.redundancy);
    bbHi[0] = Math.max(bbHi[0], px[i] + tol.redundancy);
    bbHi[1] = Math.max(bbHi[1], py[i] + tol.redundancy);
  }
  return { alive, bbox: { lo: bbLo, hi: bbHi }, verts: null };
}

/**
 * The law of a region whose M_AA has a scaled condition number above this is refined (refineLaw).
 * Laws against the exact KKT solution (50 digits, mathjs BigNumber) at every region's Chebyshev
 * centre, worst relative error without refinement / with this gate (2026-12-05, null-space
 * corrections): campaign seed 885 1.6e-7 / 5.5e-13; crane-trolley-4d 3.5e-10 / 1.4e-13 (444 of
 * 2 411 laws refined); two-carts-4d 4.5e-10 / 1.1e-11 (refining every law, with corrections through
 * M_AA⁻¹: 9e-13); seed 1933 3 % / 2.4e-14. Refining every law doubled
 * the 2-D 4 261-region solve (1.05 → 1.93–2.26 s); with the gate it refines none there and the
 * times are within their spread (boom-4d-n8: 96 laws, 1.41 against 1.34–1.41 s).
 */
const REFINE_CONDITION = 1e4;
/** the most refinement steps per right-hand side */
const REFINE_STEPS = 5;
/** laws that refineLaw changed and the steps it applied, in this thread so far (for tests and measurement) */
export const lawRefinement = { laws: 0, steps: 0 };
/**
 * ∞-norm condition number of M_AA after scaling it to unit diagonal (Jacobi scaling; van der Sluis:
 * the scaling that Cholesky's accuracy does not depend on), from M_AA's lower triangle and its full
 * inverse: ‖D M D‖∞ · ‖D⁻¹ M⁻¹ D⁻¹‖∞ with D = diag(M)^−½. O(k²), beside the inverse's O(k³).
 */
function scaledCondition(M: Float64Array, inv: Float64Array, k: number): number {
  let nm = 0;
  let ni = 0;
  for (let a = 0; a < k; a++) {
    const da = M[a * k + a];
    let sm = 0;
    let si = 0;
    for (let b = 0; b < k; b++) {
      const d = Math.sqrt(da * M[b * k + b]);
      sm += Math.abs(b <= a ? M[a * k + b] : M[b * k + a]) / d;
      si += Math.abs(inv[a * k + b]) * d;
    }
    nm = Math.max(nm, sm);
    ni = Math.max(ni, si);
  }
  return nm * ni;
}
/**
 * Iterative refinement of a region's affine law (`refineKkt`, kkt.ts), column by column: the nθ θ
 * columns (f = F's column, e = E_A's), then the constant (f = c, e = w_A). The law comes from
 * M_AA = G_A H⁻¹ G_Aᵀ, whose condition number is about G_A's squared: where the active rows are
 * nearly dependent — an output limit at every step of a plant with a small C·B makes G_A a
 * triangular Toeplitz matrix with a small diagonal — the law's last five or six digits went wrong
 * (campaign seed 885: 1e-5 against the exact solution) although every factor was well defined.
 * The corrections come from the null-space method (QR of G_Aᵀ, kkt.ts), whose accuracy depends on
 * G_A's condition number, not M_AA's: through M_AA⁻¹ itself they could not converge where
 * κ(G_A) ≈ 2e9 puts κ(M_AA) past 1/u (campaign seed 1933: the law stayed 3 % off). At most
 * REFINE_STEPS steps per column. Only laws whose M_AA is ill-conditioned are refined
 * (REFINE_CONDITION): every other law keeps its bits.
 */
function refineLaw(problem: MpqpProblem, A: number[], Lth: Float64Array, lc: Float64Array, Zth: Float64Array, zc: Float64Array): void {
  const { ntheta: nt, F, c, E, w } = problem;
  const solver = kktSolver(problem, A);
  if (!solver) return;
  let changed = false;
  for (let j = 0; j <= nt; j++) {
    // column j of the law (the constant after the θ columns); f and e are that column of F, E or c, w
    const steps =
      j === nt
        ? refineKkt(problem, A, solver, zc, 1, 0, lc, 1, 0, (i) => dot2Start(c[i]), (a) => dot2Start(-w[A[a]]), REFINE_STEPS)
        : refineKkt(problem, A, solver, Zth, nt, j, Lth, nt, j, (i) => dot2Start(F[i * nt + j]), (a) => dot2Start(-E[A[a] * nt + j]), REFINE_STEPS);
    lawRefinement.steps += steps;
    if (steps > 0) changed = true;
  }
  if (changed) lawRefinement.laws++;
}
/**
 * Inverse of an SPD block after scaling it to unit diagonal (Jacobi scaling, common practice), with
 * the pivot test on the scaled block: rows are compared with their own length, as the point QP's
 * independence test does (q ≤ tol.rank·(1 + M_pp)). Without it, a row of M-norm 1e-4 beside rows of
 * norm 4 failed the unscaled test at a relative independence of 1e-6, so a working set the point QP
 * returned was rejected and every landing there failed (boom-4d-n12). Tried only when the unscaled
 * test fails, so regions it accepts keep their bits. Null when singular after scaling too.
 */
function scaledInverse(a: Float64Array, n: number): Float64Array | null {
  if (scaleD.length < n) scaleD = new Float64Array(2 * n);
  if (scaleS.length < n * n) scaleS = new Float64Array(4 * n * n);
  const d = scaleD;
  for (let i = 0; i < n; i++) {
    if (!(a[i * n + i] > 0)) return null;
    d[i] = 1 / Math.sqrt(a[i * n + i]);
  }
  const s = scaleS; // its lower triangle and diagonal written below: all spdInverse reads
  for (let i = 0; i < n; i++) for (let j = 0; j <= i; j++) s[i * n + j] = d[i] * a[i * n + j] * d[j];
  const inv = spdInverse(s, n, tol.rank, invScratch);
  if (!inv) return null;
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) inv[i * n + j] *= d[i] * d[j];
  return inv;
}
