/**
 * Small dense kernels on row-major Float64Array. These are the only hot numerics; they
 * allocate nothing when given scratch, and are checked against mathjs in the tests.
 */

/** In-place Cholesky L Lᵀ of the n×n SPD matrix in `a` (lower triangle written, upper left as is).
 * Returns false when a pivot is ≤ pivotTol·(1 + max diagonal): the matrix is not (numerically) PD. */
export function choleskyInPlace(a: Float64Array, n: number, pivotTol: number): boolean {
  let scale = 0;
  for (let i = 0; i < n; i++) scale = Math.max(scale, Math.abs(a[i * n + i]));
  const thr = pivotTol * (1 + scale);
  for (let j = 0; j < n; j++) {
    let d = a[j * n + j];
    for (let k = 0; k < j; k++) d -= a[j * n + k] * a[j * n + k];
    if (!(d > thr)) return false;
    const ljj = Math.sqrt(d);
    a[j * n + j] = ljj;
    for (let i = j + 1; i < n; i++) {
      let s = a[i * n + j];
      for (let k = 0; k < j; k++) s -= a[i * n + k] * a[j * n + k];
      a[i * n + j] = s / ljj;
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

/** Work arrays of `spdInverse` for a caller that uses the inverse before the next call (grown on demand). */
export interface SpdScratch {
  l: Float64Array;
  inv: Float64Array;
  col: Float64Array;
}

/** A fresh, empty `SpdScratch` (one per hot caller and thread). */
export function spdScratch(): SpdScratch {
  return { l: new Float64Array(0), inv: new Float64Array(0), col: new Float64Array(0) };
}

/**
 * Inverse of an SPD matrix (n×n) via Cholesky; null when not PD. With `scratch` the result is
 * scratch.inv's first n² entries (valid until the next call with that scratch), else a new array.
 * Column j's forward substitution starts at row j: the rows above hold exact zeros (0 − l·0 stays
 * +0), so the bits are those of the full substitution.
 */
export function spdInverse(a: Float64Array, n: number, pivotTol: number, scratch?: SpdScratch): Float64Array | null {
  let l: Float64Array;
  let inv: Float64Array;
  let col: Float64Array;
  if (scratch) {
    if (scratch.l.length < n * n) {
      scratch.l = new Float64Array(2 * n * n);
      scratch.inv = new Float64Array(2 * n * n);
      scratch.col = new Float64Array(2 * n);
    }
    l = scratch.l;
    for (let q = 0; q < n * n; q++) l[q] = a[q];
    inv = scratch.inv;
    col = scratch.col;
  } else {
    l = Float64Array.from(a);
    inv = new Float64Array(n * n);
    col = new Float64Array(n);
  }
  if (!choleskyInPlace(l, n, pivotTol)) return null;
  for (let j = 0; j < n; j++) {
    // forward: L y = e_j (y_i = 0 for i < j)
    for (let i = 0; i < j; i++) col[i] = 0;
    col[j] = 1 / l[j * n + j];
    for (let i = j + 1; i < n; i++) {
      let s = 0;
      for (let k = j; k < i; k++) s -= l[i * n + k] * col[k];
      col[i] = s / l[i * n + i];
    }
    // back: Lᵀ x = y
    for (let i = n - 1; i >= 0; i--) {
      let s = col[i];
      for (let k = i + 1; k < n; k++) s -= l[k * n + i] * col[k];
      col[i] = s / l[i * n + i];
    }
    for (let i = 0; i < n; i++) inv[i * n + j] = col[i];
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
