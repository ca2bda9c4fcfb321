/**
 * Small dense-matrix helpers on nested arrays for the problem layer (model sizes are tiny and
 * this code runs once per problem file, off the hot path).
 */
import { choleskyInPlace, fromRows, luSolve } from '../linalg/dense.js';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { mathjs } from './mathjs.js';
import { tol } from '../tol.js';

export type Mat = number[][];

export function zeros(r: number, c: number): Mat {
  return Array.from({ length: r }, () => new Array<number>(c).fill(0));
}

export function eye(n: number): Mat {
  const I = zeros(n, n);
  for (let i = 0; i < n; i++) I[i][i] = 1;
  return I;
}

export function transpose(A: Mat): Mat {
  const r = A.length;
  const c = r ? A[0].length : 0;
  const T = zeros(c, r);
  for (let i = 0; i < r; i++) for (let j = 0; j < c; j++) T[j][i] = A[i][j];
  return T;
}

export function mul(A: Mat, B: Mat): Mat {
  const r = A.length;
  const k = B.length;
  const c = k ? B[0].length : 0;
  const P = zeros(r, c);
  for (let i = 0; i < r; i++)
    for (let l = 0; l < k; l++) {
      const a = A[i][l];
      if (a === 0) continue;
      for (let j = 0; j < c; j++) P[i][j] += a * B[l][j];
    }
  return P;
}

export function add(A: Mat, B: Mat, s = 1): Mat {
  return A.map((row, i) => row.map((v, j) => v + s * B[i][j]));
}

export function scale(A: Mat, s: number): Mat {
  return A.map((row) => row.map((v) => v * s));
}

export function maxAbs(A: Mat): number {
  let m = 0;
  for (const row of A) for (const v of row) m = Math.max(m, Math.abs(v));
  return m;
}

/** Frobenius norm. */
export function norm(A: Mat): number {
  let s = 0;
  for (const row of A) for (const v of row) s += v * v;
  return Math.sqrt(s);
}

export function symmetrise(A: Mat): Mat {
  return A.map((row, i) => row.map((v, j) => 0.5 * (v + A[j][i])));
}

/** Solve A X = B column by column with the shared LU kernel; throws when A is singular. */
export function solve(A: Mat, B: Mat): Mat {
  const n = A.length;
  const c = B[0].length;
  const a = fromRows(A, n);
  const X = zeros(n, c);
  for (let j = 0; j < c; j++) {
    const x = luSolve(a, n, Float64Array.from(B, (row) => row[j]), tol.rank);
    if (!x) throw new Error('singular matrix');
    for (let i = 0; i < n; i++) X[i][j] = x[i];
  }
  return X;
}

/** Numerical rank by Gaussian elimination with full pivoting, relative pivot threshold tol.rank. */
export function rank(A: Mat): number {
  const M = A.map((r) => [...r]);
  const rows = M.length;
  const cols = rows ? M[0].length : 0;
  const thresh = tol.rank * (1 + maxAbs(A));
  let r = 0;
  for (let col = 0; col < cols && r < rows; col++) {
    let best = 0;
    let bi = -1;
    let bj = -1;
    for (let i = r; i < rows; i++)
      for (let j = 0; j < cols; j++)
        if (Math.abs(M[i][j]) > best) {
          best = Math.abs(M[i][j]);
          bi = i;
          bj = j;
        }
    if (best <= thresh) break;
    [M[r], M[bi]] = [M[bi], M[r]];
    for (const row of M) [row[r], row[bj]] = [row[bj], row[r]];
    for (let i = r + 1; i < rows; i++) {
      const f = M[i][r] / M[r][r];
      for (let j = r; j < cols; j++) M[i][j] -= f * M[r][j];
    }
    r++;
  }
  return r;
}

/** PD test by the shared Cholesky kernel: every pivot must exceed tol.pd·(1 + max diagonal). */
export function isPositiveDefinite(M: Mat): boolean {
  return choleskyInPlace(fromRows(M, M.length), M.length, tol.pd);
}

/** Smallest eigenvalue of a symmetric matrix (mathjs eigs on the symmetrised matrix). */
export function minEigenvalueSymmetric(M: Mat): number {
  if (M.length === 0) return 0;
  const { values } = mathjs().eigs(symmetrise(M), { eigenvectors: false });
  return Math.min(...(values as unknown as number[]));
}

export interface Eigenvalue {
  re: number;
  im: number;
}

/**
 * Eigenvalues of a general real square matrix, as {re, im}: ml-matrix's EigenvalueDecomposition
 * (reduction to Hessenberg form, then the shifted QR iteration of EISPACK's hqr2, as in JAMA).
 * Not mathjs's eigs: mathjs 15.2.0 gives up ("The eigenvalues failed to converge") on about 3 % of
 * random 2×2 to 5×5 matrices with entries in [−1, 1] (653 of 20 000 in one run), among them
 * ordinary plants such as [[1.107, −0.605, −0.299], [−0.03, 0.627, −0.264], [0.717, −0.456, 1.032]],
 * which made the problem reader's stabilisability check fail with an internal error.
 */
export function eigenvalues(M: Mat): Eigenvalue[] {
  if (M.length === 0) return [];
  const e = new EigenvalueDecomposition(new Matrix(M.map((r) => [...r])), { assumeSymmetric: false });
  const im = e.imaginaryEigenvalues;
  return e.realEigenvalues.map((re, i) => ({ re, im: im[i] }));
}

export function spectralRadius(M: Mat): number {
  return Math.max(0, ...eigenvalues(M).map((e) => Math.hypot(e.re, e.im)));
}

/**
 * PBH test for stabilisability: rank [A − λI, B] = n for every eigenvalue with |λ| ≥ 1.
 * A complex matrix M = R + iJ has rank r exactly when [[R, −J], [J, R]] has rank 2r.
 * Returns the first offending eigenvalue, or null when (A, B) is stabilisable.
 */
export function unstabilisableMode(A: Mat, B: Mat): Eigenvalue | null {
  const n = A.length;
  for (const ev of eigenvalues(A)) {
    if (Math.hypot(ev.re, ev.im) < 1 - tol.stability) continue;
    const R = A.map((row, i) => [...row.map((v, j) => v - (i === j ? ev.re : 0)), ...B[i]]);
    const J = A.map((row, i) => [...row.map((_, j) => (i === j ? -ev.im : 0)), ...B[i].map(() => 0)]);
    const big = [
      ...R.map((row, i) => [...row, ...J[i].map((v) => -v)]),
      ...J.map((row, i) => [...row, ...R[i]]),
    ];
    if (rank(big) < 2 * n) return ev;
  }
  return null;
}
