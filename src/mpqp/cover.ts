/**
 * Facet covering by vertex lists: the part of a facet not yet covered by the slices of known
 * neighbours, kept as a list of convex pieces, each held both as rows (A y ≤ b) and as its vertices
 * with the rows tight at each vertex (a double description, after Motzkin et al. 1953).
 *
 * A new slice S = {y : s_i·y ≤ t_i} is taken off each piece P incrementally:
 * P \ S = ∪_i P ∩ {s_j ≤ t_j, j < i} ∩ {s_i ≥ t_i}, over the rows of S that cut P only, the rows
 * cutting deepest first. Whether a row cuts, misses or contains P is read off P's vertices, so
 * taking a slice costs no LP; a slice whose rows all hold at every vertex of P covers P, one with a
 * row violated at every vertex misses it. Cutting a piece by a half-space keeps the vertices inside
 * and adds, on every edge that crosses the plane, the crossing point; two vertices span an edge
 * when the rows tight at both have rank dim − 1 (the smallest face holding both is then
 * one-dimensional; common practice for polytopes, also under degeneracy).
 *
 * Pieces whose width across one of their own facets is ≤ 2·minRadius (so their Chebyshev radius is
 * ≤ minRadius) are dropped and counted by the caller: the same bound on holes as before. Vertex
 * lists are numerical: when one fails its checks (a vertex whose tight rows do not have rank dim,
 * too many vertices) the builder returns null and the caller falls back to the LP difference.
 */
import { grownF64, grownI32, intersect } from './vertices.js';
import { Arena } from '../util/arena.js';

/** A convex piece of a facet in the facet's own coordinates (dim ≥ 2). Arrays owned by the piece. */
export interface CoverPiece {
  /** rows, m × dim, unit length */
  A: number[];
  b: number[];
  m: number;
  /**
   * nv vertices, flat: vertex v's coordinates x[v·dim … v·dim + dim), the ascending indices of the
   * rows tight there t[tOff[v] … tOff[v + 1]) (three arrays per piece, not two per vertex: the
   * vertex arrays were most of the covering's garbage)
   */
  nv: number;
  x: Float64Array;
  tOff: Int32Array;
  t: Int32Array;
  /** an upper bound on the Chebyshev radius: half the least width across one of the piece's rows */
  widthBound: number;
}

/** Vertex v of P as a new array (for readers outside the hot loops). */
export function pieceVertex(P: CoverPiece, dim: number, v: number): number[] {
  return Array.from(P.x.subarray(v * dim, (v + 1) * dim));
}

/** The rows tight at vertex v of P as a new array (ascending). */
export function pieceTight(P: CoverPiece, v: number): number[] {
  return Array.from(P.t.subarray(P.tOff[v], P.tOff[v + 1]));
}

/** Numbers shared by the pieces of one facet. */
export interface CoverContext {
  dim: number;
  /** a vertex is on a row's plane within this (absolute, in the facet's coordinates) */
  eps: number;
  /** give up (return null) when a piece would have more vertices than this */
  maxVerts: number;
}

/** Which check the last 'fail' of this module failed (read right after the call; single-threaded per isolate). */
export type CoverFailure = 'rank' | 'box' | 'verts';
let failure: CoverFailure = 'rank';
export function lastCoverFailure(): CoverFailure {
  return failure;
}
const fail = (why: CoverFailure): 'fail' => {
  failure = why;
  return 'fail';
};

const RANK_TOL = 1e-9;
/** scratch of clipPiece (single-threaded per isolate): tight-row bit masks of the vertices beyond the plane, and of one vertex inside */
let masks = new Int32Array(256);
let mask = new Int32Array(8);

/** Set bits of a 32-bit integer (SWAR count, common practice). */
function popCount(x: number): number {
  x = x - ((x >>> 1) & 0x55555555);
  x = (x & 0x33333333) + ((x >>> 2) & 0x33333333);
  x = (x + (x >>> 4)) & 0x0f0f0f0f;
  return Math.imul(x, 0x01010101) >>> 24;
}


/** scratch of rankAtLeast: an orthonormal basis, row by row */
let basisScratch = new Float64Array(64);
/** scratch of subtractSlice: the reversed row (a typed array like every other row clipPiece reads) */
let flipScratch = new Float64Array(8);
/** scratch of finish: vertices per row, and each row's new index (−1: dropped); single-threaded per isolate, read within the call */
let countScratch = new Int32Array(64);
let mapScratch = new Int32Array(64);
/** scratch of clipPiece: each vertex's residual on the cutting row */
let sScratch = new Float64Array(64);
/**
 * scratch of clipPiece (single-threaded per isolate): the new piece's vertices as they are made
 * (coordinates, tight-row offsets, tight rows; copied at their final length into the piece), and
 * the rows two vertices share
 */
let bx: Float64Array = new Float64Array(256);
let bOff: Int32Array = new Int32Array(64);
let bT: Int32Array = new Int32Array(256);
let cbuf: Int32Array = new Int32Array(64);

/** True when the rows ids[i0 … i1) of A (each dim long) span at least `need` dimensions (Gram–Schmidt). */
function rankAtLeast(A: ArrayLike<number>, ids: Int32Array, i0: number, i1: number, dim: number, need: number): boolean {
  if (need <= 0) return true;
  if (basisScratch.length < (dim + 1) * dim) basisScratch = new Float64Array(2 * (dim + 1) * dim);
  const B = basisScratch;
  let nb = 0;
  for (let at = i0; at < i1; at++) {
    const i = ids[at];
    const v = nb * dim;
    for (let k = 0; k < dim; k++) B[v + k] = A[i * dim + k];
    for (let q = 0; q < nb; q++) {
      let d = 0;
      for (let k = 0; k < dim; k++) d += B[q * dim + k] * B[v + k];
      for (let k = 0; k < dim; k++) B[v + k] -= d * B[q * dim + k];
    }
    let n = 0;
    for (let k = 0; k < dim; k++) n += B[v + k] * B[v + k];
    n = Math.sqrt(n);
    if (n <= RANK_TOL) continue;
    for (let k = 0; k < dim; k++) B[v + k] /= n;
    if (++nb >= need) return true;
    if (nb >= dim) return nb >= need;
  }
  return false;
}

/** Sorted intersection of T[x0 … x1) and T[y0 … y1) into cbuf (grown to hold it); returns its length. */
function common(T: Int32Array, x0: number, x1: number, y0: number, y1: number): number {
  if (cbuf.length < x1 - x0 + 1) cbuf = new Int32Array(2 * (x1 - x0 + 1));
  // need 0: the whole intersection
  return intersect(T, x0, x1, y0, y1, cbuf, 0);
}

/**
 * The pieces' typed arrays: views of shared 64 kB blocks (a buffer of its own per array costs ~15×
 * a view; arena.ts), one per thread. Pieces live while one facet is covered, so a block is freed
 * once the facets that used it are done.
 */
const pieceArena = new Arena(1 << 16);
function f64Copy(src: Float64Array, n: number): Float64Array {
  const out = pieceArena.f64(n);
  for (let q = 0; q < n; q++) out[q] = src[q];
  return out;
}
function i32Copy(src: Int32Array, n: number): Int32Array {
  const out = pieceArena.i32(n);
  for (let q = 0; q < n; q++) out[q] = src[q];
  return out;
}

/** The piece made of clipPiece's scratch: `nv` vertices, copied at their final length. */
function scratchPiece(A: number[], b: number[], m: number, nv: number, dim: number): CoverPiece {
  return { A, b, m, nv, x: f64Copy(bx, nv * dim), tOff: i32Copy(bOff, nv + 1), t: i32Copy(bT, bOff[nv]), widthBound: Infinity };
}

/**
 * The piece P ∩ {a·y ≤ t} (a = a[off .. off + dim), unit length): P itself when every vertex satisfies the row within
 * eps (the row is then not added), null when the cut leaves nothing full-dimensional (every vertex
 * on or beyond the plane), or 'fail' when the vertex list fails a check. New arrays; P untouched,
 * except with `reuse` (P is the caller's to drop): then the new piece's rows are P's arrays, extended.
 */
export function clipPiece(P: CoverPiece, a: ArrayLike<number>, t: number, ctx: CoverContext, tidy = true, off = 0, reuse = false): CoverPiece | null | 'fail' {
  const { dim, eps } = ctx;
  const nv = P.nv;
  const PX = P.x;
  const PO = P.tOff;
  const PT = P.t;
  if (sScratch.length < nv) sScratch = new Float64Array(2 * nv);
  const s = sScratch;
  let anyOut = false;
  let anyIn = false;
  for (let v = 0; v < nv; v++) {
    const o = v * dim;
    let d = -t;
    for (let k = 0; k < dim; k++) d += a[off + k] * PX[o + k];
    s[v] = d;
    if (d > eps) anyOut = true;
    if (d < -eps) anyIn = true;
  }
  if (!anyOut) return P;
  if (!anyIn) return null;
  const k = P.m; // index of the new row
  // plain arrays: typed-array allocation dominated this function (rows and vertices are small);
  // copied at their final length (a copy then a push allocated twice), or, when the caller drops
  // P (`reuse`: a piece private to a chain of cuts), P's own arrays with the row appended
  let A: number[];
  let b: number[];
  // tidy: the rows are read (rank checks) and copied by `finish`, never kept, so P's arrays lend
  // them: the row is appended for the call and taken off again before returning (P as it was)
  const lend = tidy && !reuse;
  if (reuse || lend) {
    A = P.A;
    b = P.b;
    for (let j = 0; j < dim; j++) A.push(a[off + j]);
    b.push(t);
  } else {
    const nA = P.m * dim;
    A = new Array<number>(nA + dim);
    for (let q = 0; q < nA; q++) A[q] = P.A[q];
    for (let j = 0; j < dim; j++) A[nA + j] = a[off + j];
    b = new Array<number>(k + 1);
    for (let q = 0; q < k; q++) b[q] = P.b[q];
    b[k] = t;
  }
  // the vertices kept, in order (those on the plane gain row k, the largest index), into the scratch
  if (bx.length < nv * dim) bx = new Float64Array(2 * nv * dim);
  if (bOff.length < nv + 1) bOff = new Int32Array(2 * nv + 2);
  if (bT.length < PO[nv] + nv) bT = new Int32Array(2 * (PO[nv] + nv));
  let nOut = 0;
  let at = 0;
  bOff[0] = 0;
  for (let v = 0; v < nv; v++) {
    if (s[v] > eps) continue;
    const o = v * dim;
    const ob = nOut * dim;
    for (let j = 0; j < dim; j++) bx[ob + j] = PX[o + j];
    for (let i = PO[v]; i < PO[v + 1]; i++) bT[at++] = PT[i];
    if (s[v] >= -eps) bT[at++] = k;
    bOff[++nOut] = at;
  }
  // the rows tight at each vertex beyond the plane as a bit mask (`words` 32-bit words each): the
  // rows an inside vertex u shares with w are counted by AND and a population count, not by lists
  const words = (P.m + 31) >>> 5;
  if (masks.length < nv * words) masks = new Int32Array(2 * nv * words);
  if (mask.length < words) mask = new Int32Array(2 * words);
  for (let w = 0; w < nv; w++) {
    if (s[w] <= eps) continue;
    const o = w * words;
    masks.fill(0, o, o + words);
    for (let q = PO[w]; q < PO[w + 1]; q++) {
      const i = PT[q];
      masks[o + (i >>> 5)] |= 1 << (i & 31);
    }
  }
  for (let u = 0; u < nv; u++) {
    if (s[u] >= -eps) continue;
    const u0 = PO[u];
    const u1 = PO[u + 1];
    if (u1 - u0 < dim - 1) continue;
    mask.fill(0, 0, words);
    for (let q = u0; q < u1; q++) {
      const i = PT[q];
      mask[i >>> 5] |= 1 << (i & 31);
    }
    for (let w = 0; w < nv; w++) {
      if (s[w] <= eps) continue;
      let shared = 0;
      for (let q = 0, o = w * words; q < words; q++) shared += popCount(mask[q] & masks[o + q]);
      if (shared < dim - 1) continue;
      let cl = common(PT, u0, u1, PO[w], PO[w + 1]);
      if (!rankAtLeast(A, cbuf, 0, cl, dim, dim - 1)) continue;
      const lam = s[u] / (s[u] - s[w]);
      if (bx.length < (nOut + 1) * dim) bx = grownF64(bx, (nOut + 1) * dim);
      const ox = nOut * dim;
      const ou = u * dim;
      const ow = w * dim;
      for (let j = 0; j < dim; j++) bx[ox + j] = PX[ou + j] + lam * (PX[ow + j] - PX[ou + j]);
      cbuf[cl++] = k; // cbuf has room: the common rows are fewer than u's
      // a crossing point within eps of one found before (numerical near-degeneracy): one vertex
      let dup = -1;
      for (let q = 0; q < nOut && dup < 0; q++) {
        let d = 0;
        for (let j = 0; j < dim && d <= eps; j++) d = Math.max(d, Math.abs(bx[q * dim + j] - bx[ox + j]));
        if (d <= eps) dup = q;
      }
      if (dup >= 0) {
        // its tight rows become the union, in place (the lists after it move along)
        const had: number[] = [];
        for (let i = bOff[dup]; i < bOff[dup + 1]; i++) had.push(bT[i]);
        for (let i = 0; i < cl; i++) had.push(cbuf[i]);
        const merged = [...new Set(had)].sort((x1, y1) => x1 - y1);
        const grow = merged.length - (bOff[dup + 1] - bOff[dup]);
        if (bT.length < at + grow) bT = grownI32(bT, at + grow);
        bT.copyWithin(bOff[dup + 1] + grow, bOff[dup + 1], at);
        for (let i = 0; i < merged.length; i++) bT[bOff[dup] + i] = merged[i];
        for (let q = dup + 1; q <= nOut; q++) bOff[q] += grow;
        at += grow;
        continue;
      }
      if (bT.length < at + cl) bT = grownI32(bT, at + cl);
      for (let i = 0; i < cl; i++) bT[at++] = cbuf[i];
      if (bOff.length < nOut + 2) bOff = grownI32(bOff, nOut + 2);
      bOff[++nOut] = at;
      if (nOut > ctx.maxVerts) {
        if (lend) giveBack(P, dim);
        return fail('verts');
      }
    }
  }
  if (!tidy) return nOut > dim ? scratchPiece(A, b, P.m + 1, nOut, dim) : null;
  const out = finish(A, b, P.m + 1, bx, nOut, bOff, bT, ctx, true);
  if (lend) giveBack(P, dim);
  return out;
}

/** Take the row lent by `clipPiece` off P's arrays again. */
function giveBack(P: CoverPiece, dim: number): void {
  P.A.length = P.m * dim;
  P.b.length = P.m;
}

/**
 * Drop rows tight at fewer than dim vertices (not facets), renumber, check every vertex has tight
 * rows of rank dim, and bound the Chebyshev radius by the least width. The vertices (nv, flat x, tight
 * rows t[tOff[v] … tOff[v + 1])) are clipPiece's scratch (`copy`: copied into the piece) or a piece's
 * own (its coordinates then shared).
 */
function finish(A: number[], b: number[], m: number, X: Float64Array, nv: number, tOff: Int32Array, T: Int32Array, ctx: CoverContext, copy: boolean): CoverPiece | null | 'fail' {
  const { dim, eps } = ctx;
  if (nv < dim + 1) return null;
  if (countScratch.length < m) {
    countScratch = new Int32Array(2 * m);
    mapScratch = new Int32Array(2 * m);
  }
  const count = countScratch;
  count.fill(0, 0, m);
  const end = tOff[nv];
  for (let i = 0; i < end; i++) count[T[i]]++;
  const map = mapScratch;
  let mm = 0;
  for (let i = 0; i < m; i++) map[i] = count[i] >= dim ? mm++ : -1;
  const A2 = new Array<number>(mm * dim);
  const b2 = new Array<number>(mm);
  for (let i = 0; i < m; i++) {
    if (map[i] < 0) continue;
    for (let k = 0; k < dim; k++) A2[map[i] * dim + k] = A[i * dim + k];
    b2[map[i]] = b[i];
  }
  let len = 0;
  for (let i = 0; i < end; i++) if (map[T[i]] >= 0) len++;
  const T2 = pieceArena.i32(len);
  const tOff2 = pieceArena.i32(nv + 1);
  len = 0;
  for (let v = 0; v < nv; v++) {
    const u0 = len;
    for (let i = tOff[v]; i < tOff[v + 1]; i++) if (map[T[i]] >= 0) T2[len++] = map[T[i]];
    if (len - u0 < dim || !rankAtLeast(A2, T2, u0, len, dim, dim)) return fail('rank');
    tOff2[v + 1] = len;
  }
  // Chebyshev radius ≤ half the width across any row: r ≤ (b_i − min_v a_i·v)/2
  let wb = Infinity;
  for (let i = 0; i < mm; i++) {
    let mn = Infinity;
    for (let v = 0; v < nv; v++) {
      const o = v * dim;
      let d = 0;
      for (let k = 0; k < dim; k++) d += A2[i * dim + k] * X[o + k];
      if (d < mn) mn = d;
    }
    wb = Math.min(wb, 0.5 * (b2[i] - mn));
  }
  if (!(wb > eps)) return null;
  return { A: A2, b: b2, m: mm, nv, x: copy ? f64Copy(X, nv * dim) : X, tOff: tOff2, t: T2, widthBound: wb };
}

/**
 * The vertex description of {y : A y ≤ b} ⊂ the box [lo, hi] (the box must hold it with room to
 * spare: its rows are dropped at the end): the box cut by each row in turn. Null when empty or
 * flat, 'fail' when the vertex list fails a check.
 */
export function polytopePiece(A: Float64Array, b: Float64Array, m: number, lo: ArrayLike<number>, hi: ArrayLike<number>, ctx: CoverContext): CoverPiece | null | 'fail' {
  const { dim } = ctx;
  // the box: rows 2k (y_k ≤ hi_k) and 2k+1 (−y_k ≤ −lo_k); vertex bits pick lo or hi
  const BA = new Array<number>(2 * dim * dim).fill(0);
  const Bb = new Array<number>(2 * dim).fill(0);
  for (let k = 0; k < dim; k++) {
    BA[2 * k * dim + k] = 1;
    Bb[2 * k] = hi[k];
    BA[(2 * k + 1) * dim + k] = -1;
    Bb[2 * k + 1] = -lo[k];
  }
  const nv = 1 << dim;
  const x = new Float64Array(nv * dim);
  const tOff = new Int32Array(nv + 1);
  const t = new Int32Array(nv * dim);
  for (let mask = 0; mask < nv; mask++) {
    for (let k = 0; k < dim; k++) {
      const up = (mask >> k) & 1;
      x[mask * dim + k] = up ? hi[k] : lo[k];
      t[mask * dim + k] = up ? 2 * k : 2 * k + 1;
    }
    tOff[mask + 1] = (mask + 1) * dim;
  }
  let P: CoverPiece = { A: BA, b: Bb, m: 2 * dim, nv, x, tOff, t, widthBound: Infinity };
  for (let i = 0; i < m; i++) {
    // the box and every piece of this chain are private: each cut appends its row to the same arrays
    const r = clipPiece(P, A, b[i], ctx, false, i * dim, true);
    if (r === null || r === 'fail') return r;
    P = r;
  }
  const done = finish(P.A, P.b, P.m, P.x, P.nv, P.tOff, P.t, ctx, false);
  if (done === null || done === 'fail') return done;
  P = done;
  // a vertex on the box: the box did not hold the polytope with room to spare
  for (let v = 0; v < P.nv; v++)
    for (let k = 0; k < dim; k++) {
      const y = P.x[v * dim + k];
      if (y <= lo[k] + ctx.eps || y >= hi[k] - ctx.eps) return fail('box');
    }
  return P;
}

/**
 * A piece from vertices already known (a region's own vertex list: those on the facet, in facet
 * coordinates: nv of them, flat as in CoverPiece): the rows A, b (m of them, dim each; the tight
 * lists index them, ascending), then cut by the `cm` extra rows cA, cb (sub-box faces), and checked
 * and tidied as `polytopePiece`'s result is (rows tight at fewer than dim vertices dropped, every
 * vertex of rank dim). Null when nothing full-dimensional is left; 'fail' on a failed check or two
 * vertices within eps of each other (the caller then builds the piece by `facetPiece`). The arrays
 * become the piece's.
 */
export function pieceFromVertices(A: number[], b: number[], m: number, nv: number, x: Float64Array, tOff: Int32Array, t: Int32Array, cA: ArrayLike<number>, cb: ArrayLike<number>, cm: number, ctx: CoverContext): CoverPiece | null | 'fail' {
  const { dim, eps } = ctx;
  for (let u = 0; u < nv; u++)
    for (let v = 0; v < u; v++) {
      let d = 0;
      for (let k = 0; k < dim && d <= eps; k++) d = Math.max(d, Math.abs(x[u * dim + k] - x[v * dim + k]));
      if (d <= eps) return fail('verts');
    }
  let P: CoverPiece = { A, b, m, nv, x, tOff, t, widthBound: Infinity };
  for (let i = 0; i < cm; i++) {
    const r = clipPiece(P, cA, cb[i], ctx, false, i * dim, true);
    if (r === null || r === 'fail') return r;
    P = r;
  }
  return finish(P.A, P.b, P.m, P.x, P.nv, P.tOff, P.t, ctx, false);
}

/**
 * `polytopePiece`, and when its vertex list fails a check at the context's tolerance, once more at a
 * tolerance relative to the box (1e-9 of its widest side) when that is finer: on a small facet
 * whose rows meet at small angles (a long thin wedge) an absolute tolerance puts points of
 * different rows within it of each other. The context to cover the facet with comes back with the
 * piece; 'fail' when both fail.
 */
export function facetPiece(A: Float64Array, b: Float64Array, m: number, lo: ArrayLike<number>, hi: ArrayLike<number>, ctx: CoverContext): { piece: CoverPiece | null; ctx: CoverContext } | 'fail' {
  const first = polytopePiece(A, b, m, lo, hi, ctx);
  if (first !== 'fail') return { piece: first, ctx };
  let w = 0;
  for (let k = 0; k < ctx.dim; k++) w = Math.max(w, hi[k] - lo[k]);
  const fine: CoverContext = { ...ctx, eps: 1e-9 * w };
  if (!(fine.eps < ctx.eps)) return 'fail';
  const second = polytopePiece(A, b, m, lo, hi, fine);
  return second === 'fail' ? 'fail' : { piece: second, ctx: fine };
}

/**
 * P minus the slice {y : S_A y ≤ S_b} (rows unit length): the pieces left, each cut off by one row
 * of the slice (rows that cut P only, deepest first). `P` itself (same object) when the slice
 * misses P, [] when it covers P, 'fail' when a vertex list fails its checks. Pieces with
 * widthBound ≤ minRadius are not returned; their number is added to `dropped.count`.
 */
export function subtractSlice(P: CoverPiece, SA: Float64Array, Sb: Float64Array, sm: number, minRadius: number, ctx: CoverContext, dropped: { count: number }): CoverPiece[] | CoverPiece | 'fail' {
  const { dim, eps } = ctx;
  const depth: { i: number; d: number }[] = [];
  const X = P.x;
  for (let i = 0; i < sm; i++) {
    let mx = -Infinity;
    let mn = Infinity;
    for (let v = 0; v < P.nv; v++) {
      const o = v * dim;
      let d = -Sb[i];
      for (let k = 0; k < dim; k++) d += SA[i * dim + k] * X[o + k];
      if (d > mx) mx = d;
      if (d < mn) mn = d;
    }
    if (mn > -eps) return P; // P lies beyond this row (up to a face): the slice misses it
    if (mx > eps) depth.push({ i, d: mx });
  }
  if (depth.length === 0) return []; // every row holds on P: covered
  depth.sort((x, y) => y.d - x.d || x.i - y.i);
  const out: CoverPiece[] = [];
  let cur: CoverPiece = P;
  if (flipScratch.length < dim) flipScratch = new Float64Array(2 * dim);
  const flipped = flipScratch; // read by clipPiece during the call only (rows are copied)
  for (const { i } of depth) {
    for (let k = 0; k < dim; k++) flipped[k] = -SA[i * dim + k];
    const beyond = clipPiece(cur, flipped, -Sb[i], ctx);
    if (beyond === 'fail') return 'fail';
    if (beyond === cur) {
      // the rest lies beyond this row: it is not covered at all
      const rest = cur === P ? P : finish(cur.A, cur.b, cur.m, cur.x, cur.nv, cur.tOff, cur.t, ctx, false);
      if (rest === 'fail') return 'fail';
      if (rest && rest.widthBound > minRadius) out.push(rest);
      else dropped.count++;
      return out;
    }
    if (beyond) {
      if (beyond.widthBound > minRadius) out.push(beyond);
      else dropped.count++;
    }
    // a piece cut here (not the caller's P) is dropped once cut again: its arrays take the row
    const inside = clipPiece(cur, SA, Sb[i], ctx, false, i * dim, cur !== P);
    if (inside === 'fail') return 'fail';
    if (inside === null) return out;
    cur = inside;
  }
  return out;
}

/**
 * A point inside P and the radius of a ball about it inside P, without an LP: the mean of the
 * vertices and its least distance to P's rows (≤ the Chebyshev radius).
 */
export function pieceCentre(P: CoverPiece, dim: number): { point: Float64Array; radius: number } {
  const c = new Float64Array(dim);
  const X = P.x;
  for (let v = 0; v < P.nv; v++) for (let k = 0; k < dim; k++) c[k] += X[v * dim + k];
  for (let k = 0; k < dim; k++) c[k] /= P.nv;
  let r = Infinity;
  for (let i = 0; i < P.m; i++) {
    let d = P.b[i];
    for (let k = 0; k < dim; k++) d -= P.A[i * dim + k] * c[k];
    r = Math.min(r, d);
  }
  return { point: c, radius: r };
}
