import { tol } from '../tol.js';
import { lpMaximizeReference } from './reference.js';

/**
 * Dense LP kernel for the hot path: maximise cᵀx subject to A x ≤ b (A m×n row-major), by the
 * primal active-set (simplex-like) method started from a feasible point. Steps follow the
 * projection of c on the null space of the working rows; Bland's smallest-index rule breaks ties
 * in both the entering and the leaving choice, which prevents cycling at degenerate vertices.
 * Checked against javascript-lp-solver in test/lp.
 */
export type LpStatus = 'optimal' | 'infeasible' | 'unbounded' | 'iteration-limit';
export interface LpResult {
  status: LpStatus;
  x: Float64Array;
  value: number;
  iterations: number;
  /** Rows of the final working set (indices into A) of an optimal `lpMaximizeFrom`; its optimal basis when it has n rows. Absent otherwise. */
  working?: number[];
}

/** Counts kernel calls (for the statistics in the table and the benchmark). */
export const lpCounter = { calls: 0, fallbacks: 0 };

/**
 * Maximise from a feasible start x0 (A x0 ≤ b + tol.primal). The caller guarantees
 * feasibility of x0; `infeasible` is never returned by this entry.
 */
export function lpMaximizeFrom(
  c: Float64Array,
  A: Float64Array,
  b: Float64Array,
  m: number,
  n: number,
  x0: Float64Array,
  skip?: Uint8Array,
): LpResult {
  lpCounter.calls++;
  const x = x0.slice();
  grow(m, n);
  const work = scratch.work; // working rows, linearly independent: work[0..k)
  let k = 0;
  const inWork = scratch.inWork;
  inWork.fill(0, 0, m);
  let excluded = skip; // rows left out of this LP are never entered
  if (!excluded) {
    excluded = scratch.none;
    excluded.fill(0, 0, m);
  }
  const rowNorm = scratch.rowNorm;
  for (let i = 0; i < m; i++) {
    let s = 0;
    for (let j = 0; j < n; j++) s += A[i * n + j] * A[i * n + j];
    rowNorm[i] = Math.sqrt(s);
  }
  let cNorm = 0;
  for (let j = 0; j < n; j++) cNorm += c[j] * c[j];
  cNorm = Math.sqrt(cNorm);
  const d = scratch.d;
  const maxIter = 20 * (m + n) + 50;
  const eps = tol.lpPivot;
  let it = 0;
  for (; it < maxIter; it++) {
    // multipliers μ of c on the working rows (least squares) and the projected direction d = c − A_Wᵀμ
    const mu = projectOnRows(A, n, work, k, c, d);
    let dn = 0;
    for (let j = 0; j < n; j++) dn += d[j] * d[j];
    dn = Math.sqrt(dn);
    if (k < n && dn > eps * (1 + cNorm)) {
      // ratio test along d
      let tBest = Infinity;
      let iBest = -1;
      for (let i = 0; i < m; i++) {
        if (inWork[i] || excluded[i] || rowNorm[i] === 0) continue;
        // a_i·d first: a_i·x (the same sum, in the same order) only for the rows the step moves towards
        let ad = 0;
        for (let j = 0; j < n; j++) ad += A[i * n + j] * d[j];
        if (ad <= 1e-9 * rowNorm[i] * dn) continue;
        let ax = 0;
        for (let j = 0; j < n; j++) ax += A[i * n + j] * x[j];
        const t = Math.max(0, (b[i] - ax) / ad);
        if (iBest < 0 || t < tBest - 1e-15 * (1 + tBest)) {
          tBest = t;
          iBest = i;
        }
      }
      if (iBest < 0) return { status: 'unbounded', x, value: dot(c, x, n), iterations: it };
      for (let j = 0; j < n; j++) x[j] += tBest * d[j];
      work[k++] = iBest;
      inWork[iBest] = 1;
      continue;
    }
    // c lies in the span of the working rows: optimal when every multiplier is ≥ 0
    let leave = -1;
    let leaveRow = Infinity;
    for (let p = 0; p < k; p++) {
      if (mu[p] < -eps * (1 + cNorm) && work[p] < leaveRow) {
        leaveRow = work[p];
        leave = p;
      }
    }
    if (leave < 0) {
      if (maxViolation(A, b, m, n, x, excluded) <= 1e3 * tol.primal) {
        const working: number[] = [];
        for (let p = 0; p < k; p++) working.push(work[p]);
        return { status: 'optimal', x, value: dot(c, x, n), iterations: it, working };
      }
      break; // round-off drove the iterate out of the polytope: let the reference decide
    }
    inWork[work[leave]] = 0;
    work.copyWithin(leave, leave + 1, k);
    k--;
  }
  lpCounter.fallbacks++;
  return lpReferenceMasked(c, A, b, m, n, excluded, it);
}

function maxViolation(A: Float64Array, b: Float64Array, m: number, n: number, x: Float64Array, excluded: Uint8Array): number {
  let worst = 0;
  for (let i = 0; i < m; i++) {
    if (excluded[i]) continue;
    let s = -b[i];
    for (let j = 0; j < n; j++) s += A[i * n + j] * x[j];
    if (s > worst) worst = s;
  }
  return worst;
}

/** The javascript-lp-solver reference on the rows not excluded (the kernel's fallback, and the `lp: 'reference'` engine). */
export function lpReferenceMasked(c: Float64Array, A: Float64Array, b: Float64Array, m: number, n: number, excluded: Uint8Array, it: number): LpResult {
  const rows: number[] = [];
  for (let i = 0; i < m; i++) if (!excluded[i]) rows.push(i);
  const sub = new Float64Array(rows.length * n);
  const subB = new Float64Array(rows.length);
  rows.forEach((q, i) => {
    for (let j = 0; j < n; j++) sub[i * n + j] = A[q * n + j];
    subB[i] = b[q];
  });
  const r = lpMaximizeReference(c, sub, subB, rows.length, n);
  return { ...r, iterations: it };
}

/**
 * Maximise cᵀx s.t. A x ≤ b with no known start: phase 1 maximises a common slack s (scaled by each row norm)
 * (A x + s·1 ≤ b, s ≤ 1) from x = start (default 0); infeasible when the best s < −tol.primal.
 */
export function lpMaximize(c: Float64Array, A: Float64Array, b: Float64Array, m: number, n: number, start?: Float64Array): LpResult {
  const x0 = start ? Float64Array.from(start) : new Float64Array(n);
  let feasible = true;
  for (let i = 0; i < m && feasible; i++) {
    let s = 0;
    for (let j = 0; j < n; j++) s += A[i * n + j] * x0[j];
    if (s > b[i] + tol.primal) feasible = false;
  }
  if (!feasible) {
    const p1 = findFeasiblePoint(A, b, m, n, x0);
    if (!p1) return { status: 'infeasible', x: x0, value: NaN, iterations: 0 };
    return lpMaximizeFrom(c, A, b, m, n, p1);
  }
  return lpMaximizeFrom(c, A, b, m, n, x0);
}

/** Phase 1: a point with A x ≤ b (+tol.primal), or null when none exists. */
export function findFeasiblePoint(A: Float64Array, b: Float64Array, m: number, n: number, start?: Float64Array): Float64Array | null {
  // the Chebyshev LP with its radius free to go negative is a phase 1: radius ≥ 0 ⇔ feasible
  const ball = chebyshevBall(A, b, m, n, start ?? new Float64Array(n), 1);
  return ball.radius >= -tol.primal ? ball.center : null;
}

export interface ChebyshevBall {
  center: Float64Array;
  radius: number;
}

/**
 * Chebyshev ball of {x : A x ≤ b}: max r s.t. a_i x + ‖a_i‖ r ≤ b_i, r ≤ rCap. Starts from
 * `start` (any point; r is set low enough to be feasible). Radius ≤ 0 means empty or flat.
 */
export function chebyshevBall(A: Float64Array, b: Float64Array, m: number, n: number, start: Float64Array, rCap: number): ChebyshevBall {
  const n1 = n + 1;
  if (scratch.cheb.length < (m + 1) * n1) scratch.cheb = new Float64Array(Math.max((m + 1) * n1, 2 * scratch.cheb.length));
  if (scratch.chebB.length < m + 1) scratch.chebB = new Float64Array(Math.max(m + 1, 2 * scratch.chebB.length));
  if (scratch.chebC.length < n1) scratch.chebC = new Float64Array(2 * n1);
  // the lifted LP lives in the kernel's scratch (lpMaximizeFrom reads its first m + 1 rows and n + 1
  // columns only, and copies x0, which is made of exactly n + 1 entries)
  const A1 = scratch.cheb;
  const b1 = scratch.chebB;
  A1.fill(0, 0, (m + 1) * n1);
  if (scratch.chebX.length !== n1) scratch.chebX = new Float64Array(n1);
  const x0 = scratch.chebX;
  for (let j = 0; j < n; j++) x0[j] = start[j];
  let rMin = rCap;
  for (let i = 0; i < m; i++) {
    let rowN = 0;
    let ax = 0;
    for (let j = 0; j < n; j++) {
      A1[i * n1 + j] = A[i * n + j];
      rowN += A[i * n + j] * A[i * n + j];
      ax += A[i * n + j] * x0[j];
    }
    rowN = Math.sqrt(rowN);
    A1[i * n1 + n] = rowN;
    b1[i] = b[i];
    if (rowN > 0) rMin = Math.min(rMin, (b[i] - ax) / rowN);
    else if (b[i] < -tol.primal) return { center: Float64Array.from(start), radius: -Infinity };
  }
  A1[m * n1 + n] = 1;
  b1[m] = rCap;
  x0[n] = rMin - Math.abs(rMin) * 1e-12 - 1e-300;
  const c1 = scratch.chebC;
  c1.fill(0, 0, n1);
  c1[n] = 1;
  const r = lpMaximizeFrom(c1, A1, b1, m + 1, n1, x0);
  return { center: r.x.slice(0, n), radius: r.status === 'optimal' ? r.x[n] : -Infinity };
}

function dot(a: ArrayLike<number>, b: ArrayLike<number>, n: number): number {
  let s = 0;
  for (let j = 0; j < n; j++) s += a[j] * b[j];
  return s;
}

/**
 * Scratch of the kernel, grown on demand and reused by every call: one per module instance, so one
 * per thread (each worker has its own), and never handed to a caller. Allocating these per call
 * (and per iteration for μ) was most of the kernel's garbage.
 */
const scratch = {
  m: 0,
  n: 0,
  work: new Int32Array(0),
  inWork: new Uint8Array(0),
  none: new Uint8Array(0),
  rowNorm: new Float64Array(0),
  d: new Float64Array(0),
  mu: new Float64Array(0),
  gram: new Float64Array(0),
  rhs: new Float64Array(0),
  // chebyshevBall's lifted LP
  cheb: new Float64Array(0),
  chebB: new Float64Array(0),
  chebX: new Float64Array(0),
  chebC: new Float64Array(0),
};

function grow(m: number, n: number): void {
  if (m > scratch.m) {
    const mm = Math.max(m, 2 * scratch.m, 64);
    scratch.m = mm;
    scratch.inWork = new Uint8Array(mm);
    scratch.none = new Uint8Array(mm);
    scratch.rowNorm = new Float64Array(mm);
  }
  if (n > scratch.n) {
    const nn = Math.max(n, 2 * scratch.n, 8);
    scratch.n = nn;
    scratch.work = new Int32Array(nn);
    scratch.d = new Float64Array(nn);
    scratch.mu = new Float64Array(nn);
    scratch.gram = new Float64Array(nn * nn);
    scratch.rhs = new Float64Array(nn);
  }
}

/**
 * Least-squares multipliers μ with c ≈ A_Wᵀ μ (normal equations, W small and independent) and the
 * residual direction d = c − A_Wᵀ μ written into `d`; one refinement pass with the same factor
 * keeps d orthogonal to the working rows despite round-off. μ is the kernel's scratch (k entries).
 */
function projectOnRows(A: Float64Array, n: number, work: Int32Array, k: number, c: Float64Array, d: Float64Array): Float64Array {
  const mu = scratch.mu;
  mu.fill(0, 0, k);
  for (let j = 0; j < n; j++) d[j] = c[j];
  if (k === 0) return mu;
  const g = scratch.gram;
  const rhs = scratch.rhs;
  for (let p = 0; p < k; p++)
    for (let q = 0; q <= p; q++) {
      let s = 0;
      for (let j = 0; j < n; j++) s += A[work[p] * n + j] * A[work[q] * n + j];
      g[p * k + q] = s;
    }
  // Cholesky of the Gram matrix in its lower triangle (rows are independent by construction)
  for (let j = 0; j < k; j++) {
    let dd = g[j * k + j];
    for (let q = 0; q < j; q++) dd -= g[j * k + q] * g[j * k + q];
    const ljj = Math.sqrt(Math.max(dd, 1e-300));
    g[j * k + j] = ljj;
    for (let i = j + 1; i < k; i++) {
      let s = g[i * k + j];
      for (let q = 0; q < j; q++) s -= g[i * k + q] * g[j * k + q];
      g[i * k + j] = s / ljj;
    }
  }
  for (let pass = 0; pass < 2; pass++) {
    for (let p = 0; p < k; p++) {
      let s = 0;
      for (let j = 0; j < n; j++) s += A[work[p] * n + j] * d[j];
      rhs[p] = s;
    }
    for (let i = 0; i < k; i++) {
      let s = rhs[i];
      for (let q = 0; q < i; q++) s -= g[i * k + q] * rhs[q];
      rhs[i] = s / g[i * k + i];
    }
    for (let i = k - 1; i >= 0; i--) {
      let s = rhs[i];
      for (let q = i + 1; q < k; q++) s -= g[q * k + i] * rhs[q];
      rhs[i] = s / g[i * k + i];
    }
    for (let p = 0; p < k; p++) mu[p] += rhs[p];
    for (let j = 0; j < n; j++) {
      let s = d[j];
      for (let p = 0; p < k; p++) s -= A[work[p] * n + j] * rhs[p];
      d[j] = s;
    }
  }
  return mu;
}
