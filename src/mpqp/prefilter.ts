/**
 * LP-free redundancy proofs for the rows of a region (used by `buildRegion` before any
 * redundancy LP). Each test proves an upper bound on max a·θ over the region, so a row whose bound
 * is within its right-hand side is redundant; a test that cannot prove anything answers +∞ and the
 * row goes on to its LP. Nothing here ever declares a row a facet, so no facet can be lost.
 *
 * Both proofs are weak duality written out (common practice): if a = Σ_i y_i a_i + e with y ≥ 0
 * over rows a_i·θ ≤ b_i that hold on the region, and the region lies in the box [lo, hi], then for
 * every θ of the region a·θ ≤ Σ y_i b_i + max_{θ∈box} e·θ. The residual e (round-off, or a row
 * that is only nearly a combination) is paid for by interval arithmetic over the box.
 */
import { luSolveInPlace } from '../linalg/dense.js';

/** Scratch for `farkasBound` (grown on demand; one per caller, never shared between threads). */
export interface PrefilterScratch {
  m: Float64Array;
  y: Float64Array;
}

/** Scratch for dimension n. */
export function prefilterScratch(n: number): PrefilterScratch {
  return { m: new Float64Array(n * n), y: new Float64Array(n) };
}

/**
 * Upper bound on a·θ over {θ : A_q θ ≤ b_q} ∩ box for one row q of A (n columns, row-major):
 * a·θ = a_q·θ + (a − a_q)·θ ≤ b_q + max_box (a − a_q)·θ. Tight for a row parallel to q (a
 * duplicated or parallel-dominated hyperplane).
 */
export function parallelBound(a: ArrayLike<number>, A: Float64Array, b: ArrayLike<number>, q: number, n: number, lo: ArrayLike<number>, hi: ArrayLike<number>): number {
  let s = b[q];
  for (let j = 0; j < n; j++) {
    const e = a[j] - A[q * n + j];
    s += e > 0 ? e * hi[j] : e * lo[j];
  }
  return s;
}

/**
 * Upper bound on a·θ over {θ : A_W θ ≤ b_W} ∩ box, for a basis W of n rows of A (n columns):
 * y solves A_Wᵀ y = a (Gaussian elimination, partial pivoting); when every y_i ≥ 0 the bound is
 * y·b_W + max_box (a − A_Wᵀ y)·θ, otherwise +∞ (a is not in the cone of W's normals: W proves
 * nothing about a). When W is the optimal basis of an LP over rows holding on the region, the bound
 * is that LP's value for the objective a — the dual certificate of the LP, reused for another row.
 */
export function farkasBound(
  a: ArrayLike<number>,
  A: Float64Array,
  b: ArrayLike<number>,
  W: ArrayLike<number>,
  n: number,
  lo: ArrayLike<number>,
  hi: ArrayLike<number>,
  s: PrefilterScratch,
): number {
  const M = s.m;
  const y = s.y;
  // M = A_Wᵀ (M[j][i] = A[W_i][j]), right-hand side a
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) M[j * n + i] = A[W[i] * n + j];
  for (let j = 0; j < n; j++) y[j] = a[j];
  if (!luSolveInPlace(M, y, n, 1e-10)) return Infinity;
  // a multiplier that is zero up to round-off is set to 0 (any y ≥ 0 is a valid certificate: the
  // residual below pays for the change); a clearly negative one means W proves nothing about a
  let yScale = 0;
  for (let i = 0; i < n; i++) yScale = Math.max(yScale, Math.abs(y[i]));
  let bound = 0;
  for (let i = 0; i < n; i++) {
    if (!(y[i] >= 0)) {
      if (!(y[i] >= -1e-12 * yScale)) return Infinity;
      y[i] = 0;
    }
    bound += y[i] * b[W[i]];
  }
  // residual e = a − A_Wᵀ y, paid for over the box
  for (let j = 0; j < n; j++) {
    let e = a[j];
    for (let i = 0; i < n; i++) e -= A[W[i] * n + j] * y[i];
    bound += e > 0 ? e * hi[j] : e * lo[j];
  }
  return bound;
}
