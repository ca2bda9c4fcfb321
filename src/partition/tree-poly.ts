/**
 * Small polyhedral helpers for the search tree and the merge: vertices of a bounded region
 * {θ : A θ ≤ b}, and the range of a linear function over it (vertices first, LP otherwise).
 */
import { tol } from '../tol.js';
import { lpMaximize } from '../lp/kernel.js';
import { luSolve } from '../linalg/dense.js';

/** Half-space description, rows of A unit-norm as in the table. */
export interface HalfSpaces {
  A: number[][];
  b: number[];
}

/** Enumerating vertices costs C(rows, n) small solves; above this many we use LPs instead. */
export const VERTEX_BUDGET = 20000;

function binomial(m: number, k: number): number {
  if (k < 0 || k > m) return 0;
  let r = 1;
  for (let i = 0; i < k; i++) r = (r * (m - i)) / (i + 1);
  return Math.round(r);
}

/**
 * Vertices of a bounded polyhedron by brute force over n-subsets of its rows (exact for the
 * small dimensions of θ), deduplicated; null when the subset count exceeds `budget`.
 * Returned flat: vertex k occupies [k·n, (k+1)·n).
 */
export function polytopeVertices(h: HalfSpaces, n: number, budget: number = VERTEX_BUDGET): Float64Array | null {
  const m = h.A.length;
  if (binomial(m, n) > budget) return null;
  const out: number[] = [];
  const idx = Array.from({ length: n }, (_, i) => i);
  const M = new Float64Array(n * n);
  const r = new Float64Array(n);
  const scratch = { a: new Float64Array(n * n), x: new Float64Array(n) };
  if (m < n) return new Float64Array(0);
  for (;;) {
    for (let i = 0; i < n; i++) {
      for (let j = 0; j < n; j++) M[i * n + j] = h.A[idx[i]][j];
      r[i] = h.b[idx[i]];
    }
    const x = luSolve(M, n, r, tol.rank, scratch);
    if (x) {
      let ok = true;
      for (let i = 0; i < m && ok; i++) {
        let s = 0;
        for (let j = 0; j < n; j++) s += h.A[i][j] * x[j];
        if (s > h.b[i] + tol.inside) ok = false;
      }
      if (ok) {
        let dup = false;
        for (let k = 0; k < out.length && !dup; k += n) {
          let d = 0;
          for (let j = 0; j < n; j++) d = Math.max(d, Math.abs(out[k + j] - x[j]));
          if (d <= tol.inside) dup = true;
        }
        if (!dup) for (let j = 0; j < n; j++) out.push(x[j]);
      }
    }
    // next n-subset in lexicographic order
    let i = n - 1;
    while (i >= 0 && idx[i] === m - n + i) i--;
    if (i < 0) break;
    idx[i]++;
    for (let j = i + 1; j < n; j++) idx[j] = idx[j - 1] + 1;
  }
  return Float64Array.from(out);
}

/** Counts LPs solved by these helpers (for the tree statistics). */
export const polyLpCounter = { calls: 0 };

/** [min, max] of c·θ over the region: from its vertices when known, else two LPs. */
export function linearRange(h: HalfSpaces, n: number, c: ArrayLike<number>, vertices: Float64Array | null): [number, number] {
  if (vertices) {
    let lo = Infinity;
    let hi = -Infinity;
    for (let k = 0; k < vertices.length; k += n) {
      let s = 0;
      for (let j = 0; j < n; j++) s += c[j] * vertices[k + j];
      if (s < lo) lo = s;
      if (s > hi) hi = s;
    }
    return [lo, hi];
  }
  const m = h.A.length;
  const A = new Float64Array(m * n);
  const b = Float64Array.from(h.b);
  for (let i = 0; i < m; i++) for (let j = 0; j < n; j++) A[i * n + j] = h.A[i][j];
  const cp = Float64Array.from(c);
  const cm = cp.map((v) => -v);
  polyLpCounter.calls += 2;
  const up = lpMaximize(cp, A, b, m, n);
  const dn = lpMaximize(cm, A, b, m, n);
  if (up.status !== 'optimal' || dn.status !== 'optimal') return [Infinity, -Infinity];
  return [-dn.value, up.value];
}

/** Canonical key of the hyperplane a·θ = b (sign fixed so the first clear entry is positive). */
export function hyperplaneKey(a: ArrayLike<number>, b: number): { key: string; sign: 1 | -1 } {
  let sign: 1 | -1 = 1;
  for (let j = 0; j < a.length; j++) {
    if (Math.abs(a[j]) > tol.inside) {
      sign = a[j] > 0 ? 1 : -1;
      break;
    }
  }
  const q = (v: number) => Math.round((sign * v) / (tol.inside * 10)).toString(36);
  return { key: Array.from(a, q).join(',') + '|' + q(b), sign };
}
