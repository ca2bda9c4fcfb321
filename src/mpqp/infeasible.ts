/**
 * An empty feasible set, explained: when no θ in the box admits a z with G z ≤ w + E θ, find an
 * irreducible infeasible subset of the constraint rows by the deletion filter (Chinneck &
 * Dravnieks 1991): drop each row in turn and keep it out whenever the rest stays infeasible. What
 * remains is a smallest-by-inclusion set of rows that cannot hold together; it names the limits
 * that conflict. One LP per row, each the phase 1 of the engine's LP kernel.
 */
import { findFeasiblePoint } from '../lp/kernel.js';
import type { MpqpProblem } from './types.js';

export interface InfeasibleCore {
  /** constraint rows (indices into the mpQP) that together admit no (z, θ) */
  rows: number[];
  /** true when the parameter box is part of the conflict (the rows alone are feasible for some θ outside it) */
  needsBox: boolean;
}

/** Is {(z, θ) : G z − E θ ≤ w over `rows`, θ in the box (when `box`)} non-empty? */
function feasible(p: MpqpProblem, rows: number[], box: boolean): boolean {
  const n = p.nz + p.ntheta;
  const m = rows.length + (box ? 2 * p.ntheta : 0);
  if (m === 0) return true;
  const A = new Float64Array(m * n);
  const b = new Float64Array(m);
  rows.forEach((i, r) => {
    for (let j = 0; j < p.nz; j++) A[r * n + j] = p.G[i * p.nz + j];
    for (let j = 0; j < p.ntheta; j++) A[r * n + p.nz + j] = -p.E[i * p.ntheta + j];
    b[r] = p.w[i];
  });
  if (box)
    for (let j = 0; j < p.ntheta; j++) {
      const r = rows.length + 2 * j;
      A[r * n + p.nz + j] = 1;
      b[r] = p.box.upper[j];
      A[(r + 1) * n + p.nz + j] = -1;
      b[r + 1] = -p.box.lower[j];
    }
  return findFeasiblePoint(A, b, m, n) !== null;
}

/** null when some θ in the box is feasible; else the conflicting rows. */
export function infeasibleCore(p: MpqpProblem): InfeasibleCore | null {
  let rows = Array.from({ length: p.nc }, (_, i) => i);
  if (feasible(p, rows, true)) return null;
  // last rows first: rows of late steps go before early ones, so the core keeps the earliest conflict
  for (const i of [...rows].reverse()) {
    const rest = rows.filter((r) => r !== i);
    if (!feasible(p, rest, true)) rows = rest;
  }
  return { rows, needsBox: feasible(p, rows, false) };
}
