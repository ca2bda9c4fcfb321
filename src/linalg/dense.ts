/**
 * Small dense kernels on row-major Float64Array. These are the only hot numerics; they
 * allocate nothing when given scratch, and are checked against mathjs in the tests.
 */

/** In-place Cholesky L Lᵀ of the n×n SPD matrix in `a` (lower triangle written, upper left as is;
 * only the lower triangle and the diagonal of `a` are read).
 * Returns false when a pivot is ≤ pivotTol·(1 + max diagonal): the matrix is not (numerically) PD. */
export function choleskyInPlace(a: Float64Array, n: number, pivotTol: number): boolean {
  let scale = 0;
  for (let i = 0; i < n; i++) scale = Math.max(scale, Math.abs(a[i * n + i]));
  const thr = pivotTol * (1 + scale);
  for (let j = 0; j < n; j++) {
    const rj = j * n;
    let d = a[rj + j];
    for (let k = 0; k < j; k++) d -= a[rj + k] * a[rj + k];
    if (!(d > thr)) return false;
    const ljj = Math.sqrt(d);
    a[rj + j] = ljj;
    // rows i and i + 1 together: two independent sums, each in its own order (the same bits as one
    // row at a time; the processor overlaps the two dependency chains)
    let i = j + 1;
    for (; i + 1 < n; i += 2) {
      const r0 = i * n;
      const r1 = r0 + n;
      let s0 = a[r0 + j];
      let s1 = a[r1 + j];
      for (let k = 0; k < j; k++) {
        const ajk = a[rj + k];
        s0 -= a[r0 + k] * ajk;
        s1 -= a[r1 + k] * ajk;
      }
      a[r0 + j] = s0 / ljj;
      a[r1 + j] = s1 / ljj;
    }
    if (i < n) {
      const r0 = i * n;
      let s = a[r0 + j];
      for (let k = 0; k < j; k++) s -= a[r0 + k] * a[rj + k];
      a[r0 + j] = s / ljj;
    }
  }
  return true;
}

/** Solve L Lᵀ x = b in place in `b` (length n) with the factor from choleskyInPlace. */
export function choleskySolveInPlace(l: Float64Array, n: number, b: Float64Array | number[]): void {
  for (let i = 0; i < n; i++) {
    let s = b[i];
    for (let k = 0; k < i; k++) s -= l[i * n + k] * b[k];
    b[i] = s / l[i * n + i];
  }
  for (let i = n - 1; i >= 0; i--) {
    let s = b[i];
    for (let k = i + 1; k < n; k++) s -= l[k * n + i] * b[k];
    b[i] = s / l[i * n + i];
  }
}

/**
 * Cholesky factor of the k×k block B[a][b] = M[idx[a]·ld + idx[b]] of a symmetric matrix M, kept in
 * `l` with row stride `stride` (k ≤ stride), for a block that changes only at its end (rows appended,
 * or rows from some index on replaced): rows 0 … from − 1 of `l` and `piv` are taken as the factor
 * of the block's leading rows from an earlier call and kept, only rows from … k − 1 are formed.
 * Entry (i, j) of L is (B_ij − Σ_{q<j} L_iq L_jq) / L_jj and L_ii = √(B_ii − Σ_{q<i} L_iq²), each sum
 * in ascending q: the sums of `choleskyInPlace` on the gathered block, so the same bits (an entry
 * depends only on the rows above it). `piv` keeps each row's pivot before the root; false, as from
 * `choleskyInPlace`, when any of the k pivots is ≤ pivotTol·(1 + max_i |B_ii|) (checked again for the
 * kept rows, since the largest diagonal entry may have grown). Only entries with b ≤ a are read.
 */
export function choleskyOfBlock(M: Float64Array, ld: number, idx: ArrayLike<number>, k: number, l: Float64Array, stride: number, piv: Float64Array, from: number, pivotTol: number): boolean {
  let scale = 0;
  for (let i = 0; i < k; i++) scale = Math.max(scale, Math.abs(M[idx[i] * ld + idx[i]]));
  const thr = pivotTol * (1 + scale);
  for (let i = 0; i < from; i++) if (!(piv[i] > thr)) return false;
  for (let i = from; i < k; i++) {
    const ri = i * stride;
    const mi = idx[i] * ld;
    for (let j = 0; j < i; j++) {
      const rj = j * stride;
      let s = M[mi + idx[j]];
      for (let q = 0; q < j; q++) s -= l[ri + q] * l[rj + q];
      l[ri + j] = s / l[rj + j];
    }
    let d = M[mi + idx[i]];
    for (let q = 0; q < i; q++) d -= l[ri + q] * l[ri + q];
    piv[i] = d;
    if (!(d > thr)) return false;
    l[ri + i] = Math.sqrt(d);
  }
  return true;
}

/** `choleskySolveInPlace` on a factor kept with row stride `stride` (as `choleskyOfBlock` leaves it): the same sums in the same order. */
export function choleskySolveStrided(l: Float64Array, stride: number, n: number, b: Float64Array): void {
  for (let i = 0; i < n; i++) {
    let s = b[i];
    const ri = i * stride;
    for (let k = 0; k < i; k++) s -= l[ri + k] * b[k];
    b[i] = s / l[ri + i];
  }
  for (let i = n - 1; i >= 0; i--) {
    let s = b[i];
    for (let k = i + 1; k < n; k++) s -= l[k * stride + i] * b[k];
    b[i] = s / l[i * stride + i];
  }
}

/** Work arrays of `spdInverse` for a caller that uses the inverse before the next call (grown on demand). */
export interface SpdScratch {
  l: Float64Array;
  inv: Float64Array;
  /** four columns of the substitutions, interleaved (n × 4) */
  col: Float64Array;
}

/** A fresh, empty `SpdScratch` (one per hot caller and thread). */
export function spdScratch(): SpdScratch {
  return { l: new Float64Array(0), inv: new Float64Array(0), col: new Float64Array(0) };
}

/**
 * Inverse of an SPD matrix (n×n) via Cholesky; null when not PD. Only the lower triangle and the
 * diagonal of `a` are read (the upper triangle may hold anything). With `scratch` the result is
 * scratch.inv's first n² entries (valid until the next call with that scratch), else a new array.
 * Column j of the inverse solves L y = e_j, then Lᵀ x = y, each entry one sum in the textbook order
 * (k ascending forward, descending rows backward); column j's forward substitution starts at row j
 * (the rows above hold exact zeros: 0 − l·0 stays +0), so the bits are those of the full
 * substitution. Four columns are solved side by side (four independent sums per row, each in its
 * own order: the same bits as one column at a time, while the processor overlaps the chains).
 */
export function spdInverse(a: Float64Array, n: number, pivotTol: number, scratch?: SpdScratch): Float64Array | null {
  let l: Float64Array;
  let inv: Float64Array;
  let y: Float64Array;
  if (scratch) {
    if (scratch.l.length < n * n) {
      scratch.l = new Float64Array(2 * n * n);
      scratch.inv = new Float64Array(2 * n * n);
    }
    if (scratch.col.length < 4 * n) scratch.col = new Float64Array(8 * n);
    l = scratch.l;
    for (let q = 0; q < n * n; q++) l[q] = a[q];
    inv = scratch.inv;
    y = scratch.col;
  } else {
    l = Float64Array.from(a);
    inv = new Float64Array(n * n);
    y = new Float64Array(4 * n);
  }
  if (!choleskyInPlace(l, n, pivotTol)) return null;
  for (let j0 = 0; j0 < n; j0 += 4) {
    // columns j0 … j0 + 3 (past n: the last column again, solved twice and written twice, same values)
    const top = Math.min(j0 + 4, n);
    for (let c = 0; c < 4; c++) {
      const jc = Math.min(j0 + c, n - 1);
      // forward: L y = e_jc, rows below `top` one column at a time (y_i = 0 for i < jc)
      for (let i = 0; i < jc; i++) y[i * 4 + c] = 0;
      y[jc * 4 + c] = 1 / l[jc * n + jc];
      for (let i = jc + 1; i < top; i++) {
        let s = 0;
        for (let k = jc; k < i; k++) s -= l[i * n + k] * y[k * 4 + c];
        y[i * 4 + c] = s / l[i * n + i];
      }
    }
    const j1 = Math.min(j0 + 1, n - 1);
    const j2 = Math.min(j0 + 2, n - 1);
    const j3 = Math.min(j0 + 3, n - 1);
    for (let i = top; i < n; i++) {
      const ri = i * n;
      // each column's sum from its own first row, k ascending: the terms before `top` one by one
      let s0 = 0;
      for (let k = j0; k < top; k++) s0 -= l[ri + k] * y[k * 4];
      let s1 = 0;
      for (let k = j1; k < top; k++) s1 -= l[ri + k] * y[k * 4 + 1];
      let s2 = 0;
      for (let k = j2; k < top; k++) s2 -= l[ri + k] * y[k * 4 + 2];
      let s3 = 0;
      for (let k = j3; k < top; k++) s3 -= l[ri + k] * y[k * 4 + 3];
      for (let k = top; k < i; k++) {
        const lik = l[ri + k];
        const o = k * 4;
        s0 -= lik * y[o];
        s1 -= lik * y[o + 1];
        s2 -= lik * y[o + 2];
        s3 -= lik * y[o + 3];
      }
      const d = l[ri + i];
      const o = i * 4;
      y[o] = s0 / d;
      y[o + 1] = s1 / d;
      y[o + 2] = s2 / d;
      y[o + 3] = s3 / d;
    }
    // back: Lᵀ x = y, rows from the last, k ascending from i + 1
    for (let i = n - 1; i >= 0; i--) {
      const o = i * 4;
      let s0 = y[o];
      let s1 = y[o + 1];
      let s2 = y[o + 2];
      let s3 = y[o + 3];
      for (let k = i + 1; k < n; k++) {
        const lki = l[k * n + i];
        const p = k * 4;
        s0 -= lki * y[p];
        s1 -= lki * y[p + 1];
        s2 -= lki * y[p + 2];
        s3 -= lki * y[p + 3];
      }
      const d = l[i * n + i];
      y[o] = s0 / d;
      y[o + 1] = s1 / d;
      y[o + 2] = s2 / d;
      y[o + 3] = s3 / d;
    }
    for (let i = 0; i < n; i++) {
      const o = i * 4;
      const r = i * n;
      inv[r + j0] = y[o];
      inv[r + j1] = y[o + 1];
      inv[r + j2] = y[o + 2];
      inv[r + j3] = y[o + 3];
    }
  }
  // symmetrise against round-off
  for (let i = 0; i < n; i++)
    for (let j = 0; j < i; j++) {
      const v = 0.5 * (inv[i * n + j] + inv[j * n + i]);
      inv[i * n + j] = v;
      inv[j * n + i] = v;
    }
  return inv;
}

/** C = A·B with A r×k, B k×c. */
export function matMul(a: Float64Array, b: Float64Array, r: number, k: number, c: number): Float64Array {
  const out = new Float64Array(r * c);
  for (let i = 0; i < r; i++)
    for (let p = 0; p < k; p++) {
      const aip = a[i * k + p];
      if (aip === 0) continue;
      for (let j = 0; j < c; j++) out[i * c + j] += aip * b[p * c + j];
    }
  return out;
}

/** Aᵀ of an r×c matrix. */
export function transpose(a: Float64Array, r: number, c: number): Float64Array {
  const out = new Float64Array(r * c);
  for (let i = 0; i < r; i++) for (let j = 0; j < c; j++) out[j * r + i] = a[i * c + j];
  return out;
}

/**
 * Solve the square system M x = b (n×n, row-major) by LU with partial pivoting; returns null when
 * a pivot is below rankTol·max|M|. M and b are not modified; hot loops pass `scratch` (n² and n
 * entries, the result is written into scratch.x) so that nothing is allocated.
 */
export function luSolve(
  m: Float64Array,
  n: number,
  b: Float64Array,
  rankTol: number,
  scratch?: { a: Float64Array; x: Float64Array },
): Float64Array | null {
  const a = scratch ? scratch.a : new Float64Array(n * n);
  const x = scratch ? scratch.x : new Float64Array(n);
  a.set(m.subarray(0, n * n));
  x.set(b.subarray(0, n));
  return luSolveInPlace(a, x, n, rankTol) ? x : null;
}

/**
 * `luSolve` in place: a (the first n² entries, row-major) is overwritten by its LU factors and x
 * (the right-hand side on entry) by the solution. False when a pivot is below rankTol·max|a|
 * (a and x are then partly overwritten).
 */
export function luSolveInPlace(a: Float64Array, x: Float64Array, n: number, rankTol: number): boolean {
  let scale = 0;
  for (let i = 0; i < n * n; i++) scale = Math.max(scale, Math.abs(a[i]));
  const thr = rankTol * Math.max(scale, 1e-300);
  for (let k = 0; k < n; k++) {
    let p = k;
    let best = Math.abs(a[k * n + k]);
    for (let i = k + 1; i < n; i++) {
      const v = Math.abs(a[i * n + k]);
      if (v > best) {
        best = v;
        p = i;
      }
    }
    if (best <= thr) return false;
    if (p !== k) {
      for (let j = 0; j < n; j++) {
        const t = a[k * n + j];
        a[k * n + j] = a[p * n + j];
        a[p * n + j] = t;
      }
      const t = x[k];
      x[k] = x[p];
      x[p] = t;
    }
    const piv = a[k * n + k];
    for (let i = k + 1; i < n; i++) {
      const f = a[i * n + k] / piv;
      if (f === 0) continue;
      a[i * n + k] = 0;
      for (let j = k + 1; j < n; j++) a[i * n + j] -= f * a[k * n + j];
      x[i] -= f * x[k];
    }
  }
  for (let i = n - 1; i >= 0; i--) {
    let s = x[i];
    for (let j = i + 1; j < n; j++) s -= a[i * n + j] * x[j];
    x[i] = s / a[i * n + i];
  }
  return true;
}

/** Nested arrays → row-major Float64Array. */
export function fromRows(rows: number[][], cols?: number): Float64Array {
  const c = cols ?? (rows[0]?.length ?? 0);
  const out = new Float64Array(rows.length * c);
  rows.forEach((row, i) => row.forEach((v, j) => (out[i * c + j] = v)));
  return out;
}

/** Row-major Float64Array → nested arrays. */
export function toRows(a: ArrayLike<number>, r: number, c: number): number[][] {
  const out: number[][] = [];
  for (let i = 0; i < r; i++) {
    const row = new Array<number>(c);
    for (let j = 0; j < c; j++) row[j] = a[i * c + j];
    out.push(row);
  }
  return out;
}

/** Dekker's split constant 2²⁷ + 1 (Veltkamp splitting): a double into two halves of ≤ 26 bits. */
const SPLIT = 134217729;
/** The low part of the exact product a·b (a·b = fl(a·b) + twoProductLow(a, b, fl(a·b))), Dekker 1971; no overflow here. */
export function twoProductLow(a: number, b: number, p: number): number {
  let t = SPLIT * a;
  const ah = t - (t - a);
  const al = a - ah;
  t = SPLIT * b;
  const bh = t - (t - b);
  const bl = b - bh;
  return ah * bh - p + ah * bl + al * bh + al * bl;
}
/** Dot2's running sum hi + lo (one per thread; see dot2Add) */
const dot2 = { hi: 0, lo: 0 };
/** Start a Dot2 sum at x. */
export function dot2Start(x: number): void {
  dot2.hi = x;
  dot2.lo = 0;
}
/**
 * Add a·b to the Dot2 sum with the product's and the sum's rounding errors carried apart (TwoProduct
 * by Dekker's splitting, TwoSum by Knuth; Ogita, Rump & Oishi 2005, "Accurate sum and dot product"):
 * the result is as if formed in twice the working precision, then rounded once.
 */
export function dot2Add(a: number, b: number): void {
  const p = a * b;
  const s = dot2.hi + p;
  const z = s - dot2.hi;
  const se = dot2.hi - (s - z) + (p - z);
  dot2.hi = s;
  dot2.lo += se + twoProductLow(a, b, p);
}
/** The Dot2 sum, rounded to double. */
export function dot2Value(): number {
  return dot2.hi + dot2.lo;
}

/**
 * Incremental Householder QR of a matrix given column by column (common practice: Golub & Van Loan,
 * "Matrix Computations", §5.1–5.2): reflector a is row a of `v` (row stride n; entries a + 1 … n − 1
 * hold the vector below its implied leading 1, entry a holds R_aa), its scalar in tau[a]. Apply
 * reflectors 0 … k − 1 to x (entries xo … xo + n − 1) in place, H_a = I − tau_a v_a v_aᵀ, and return ‖x[k … n)‖₂:
 * the distance from x to the span of the k columns factored so far, in the Euclidean metric, as
 * accurate as the orthogonal factor (backward stable; no normal equations, so the columns' condition
 * number is not squared). O(k·n). Row k of `v` itself may be x (xo = k·n).
 */
export function householderReduce(v: Float64Array, tau: Float64Array, n: number, k: number, x: Float64Array, xo = 0): number {
  for (let a = 0; a < k; a++) {
    const t = tau[a];
    if (t === 0) continue;
    const o = a * n;
    let s = x[xo + a];
    for (let i = a + 1; i < n; i++) s += v[o + i] * x[xo + i];
    s *= t;
    x[xo + a] -= s;
    for (let i = a + 1; i < n; i++) x[xo + i] -= s * v[o + i];
  }
  let ss = 0;
  for (let i = k; i < n; i++) ss += x[xo + i] * x[xo + i];
  return Math.sqrt(ss);
}

/**
 * Turn row k of `v` (a column already reduced by reflectors 0 … k − 1 with householderReduce) into
 * reflector k, whose tail norm `norm` the caller has from householderReduce: x[k …] ↦ (β, 0, …), β = −sign(x_k)·norm,
 * v = (x − βe_k)/(x_k − β) below its leading 1, tau = (β − x_k)/β. A zero tail gives the identity (tau = 0).
 */
export function householderForm(v: Float64Array, tau: Float64Array, n: number, k: number, norm: number): void {
  const o = k * n;
  if (norm === 0) {
    tau[k] = 0;
    return;
  }
  const alpha = v[o + k];
  const beta = alpha > 0 ? -norm : norm;
  const v0 = alpha - beta;
  for (let i = k + 1; i < n; i++) v[o + i] /= v0;
  tau[k] = (beta - alpha) / beta;
  v[o + k] = beta;
}
