import { lpMaximize } from '../lp/kernel.js';
import { add, mul, type Mat } from '../problem/dense.js';
import type { Bounds, TerminalSet } from '../problem/types.js';
import { tol } from '../tol.js';

/** Most steps the finite determination may take before the set counts as not finitely determined. */
export const TERMINAL_MAX_STEPS = 200;

export type TerminalSetResult = { ok: true; set: TerminalSet } | { ok: false; reason: string };

/** Rows a x ≤ b of the limits on x, y = C x and u = −K x (unit-norm rows; null bounds give none). */
function limitRows(n: number, C: Mat, K: Mat, limits: { state?: Bounds; output?: Bounds; input?: Bounds }): { a: number[][]; b: number[]; empty: boolean } {
  const a: number[][] = [];
  const b: number[] = [];
  let empty = false;
  const add1 = (row: number[], bounds: Bounds | undefined, i: number) => {
    if (!bounds) return;
    const nr = Math.hypot(...row);
    for (const [bound, sign] of [
      [bounds.upper[i], 1],
      [bounds.lower[i], -1],
    ] as const) {
      if (bound === null) continue;
      if (nr <= 1e-14) {
        if (sign * bound < 0) empty = true; // 0 ≤ bound fails for every x
        continue;
      }
      a.push(row.map((v) => (sign * v) / nr));
      b.push((sign * bound) / nr);
    }
  };
  for (let i = 0; i < n; i++) add1(Array.from({ length: n }, (_, j) => (i === j ? 1 : 0)), limits.state, i);
  C.forEach((row, i) => add1(row, limits.output, i));
  K.forEach((row, i) => add1(row.map((v) => -v), limits.input, i));
  return { a, b, empty };
}

function lpMax(c: number[], a: number[][], b: number[]): { status: string; value: number } {
  const n = c.length;
  const m = a.length;
  if (m === 0) return { status: c.some((v) => v !== 0) ? 'unbounded' : 'optimal', value: 0 };
  const A = new Float64Array(m * n);
  a.forEach((row, i) => row.forEach((v, j) => (A[i * n + j] = v)));
  const r = lpMaximize(Float64Array.from(c), A, Float64Array.from(b), m, n);
  return { status: r.status, value: r.value };
}

/**
 * The maximal positively invariant set of x⁺ = (A − BK) x under the state, output and input
 * limits (u = −Kx), by the finite determination of Gilbert & Tan (1991):
 * O_t = {x : H_c Φ^k x ≤ h_c, k = 0…t}; O∞ = O_t at the first t for which every row of
 * H_c Φ^(t+1) is implied by O_t (LP maximum ≤ bound + tol.redundancy). Redundant rows are then
 * removed one at a time (a row is dropped when the LP over the remaining rows keeps it within its bound).
 */
export function invariantSet(
  A: Mat,
  B: Mat,
  C: Mat,
  K: Mat,
  limits: { state?: Bounds; output?: Bounds; input?: Bounds },
  maxSteps: number = TERMINAL_MAX_STEPS,
): TerminalSetResult {
  const n = A.length;
  const Phi = add(A, mul(B, K), -1);
  const base = limitRows(n, C, K, limits);
  if (base.empty || base.b.some((v) => v < -tol.primal)) return { ok: false, reason: 'the limits exclude the origin (the equilibrium of the LQR loop): the invariant set is empty' };
  const rowsA: number[][] = [...base.a];
  const rowsB: number[] = [...base.b];
  let Pk: Mat = Phi; // Φ^(t+1)
  for (let t = 0; t <= maxSteps; t++) {
    // candidate rows H_c Φ^(t+1)
    const cand = base.a.map((row) => Pk[0].map((_, j) => row.reduce((s, v, l) => s + v * Pk[l][j], 0)));
    let implied = true;
    for (let i = 0; i < cand.length && implied; i++) {
      const r = lpMax(cand[i], rowsA, rowsB);
      if (r.status === 'infeasible') return { ok: false, reason: 'the invariant set is empty' };
      if (r.status !== 'optimal' || r.value > base.b[i] + tol.redundancy * (1 + Math.abs(base.b[i]))) implied = false;
    }
    if (implied) return { ok: true, set: { ...removeRedundant(rowsA, rowsB), index: t } };
    if (t === maxSteps) break;
    for (let i = 0; i < cand.length; i++) {
      const nr = Math.hypot(...cand[i]);
      if (nr <= 1e-14) continue; // 0 ≤ b with b ≥ 0: always holds
      rowsA.push(cand[i].map((v) => v / nr));
      rowsB.push(base.b[i] / nr);
    }
    Pk = mul(Pk, Phi);
  }
  return { ok: false, reason: `the invariant set is not finitely determined within ${maxSteps} steps (Gilbert & Tan 1991); bound every state through the state, output or input limits` };
}

function removeRedundant(a: number[][], b: number[]): { H: number[][]; h: number[] } {
  const keep = a.map(() => true);
  for (let i = 0; i < a.length; i++) {
    // exact duplicates first (cheap)
    for (let j = 0; j < i && keep[i]; j++)
      if (keep[j] && a[j].every((v, k) => Math.abs(v - a[i][k]) <= 1e-12) && b[j] <= b[i] + 1e-12) keep[i] = false;
  }
  for (let i = 0; i < a.length; i++) {
    if (!keep[i]) continue;
    const oa: number[][] = [];
    const ob: number[] = [];
    for (let j = 0; j < a.length; j++)
      if (j !== i && keep[j]) {
        oa.push(a[j]);
        ob.push(b[j]);
      }
    const r = lpMax(a[i], oa, ob);
    if (r.status === 'optimal' && r.value <= b[i] + tol.redundancy * (1 + Math.abs(b[i]))) keep[i] = false;
  }
  return { H: a.filter((_, i) => keep[i]), h: b.filter((_, i) => keep[i]) };
}
