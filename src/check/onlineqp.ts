/**
 * The online MPC at one θ, solved by the `quadprog` package (Goldfarb & Idnani's dual method,
 * 1983): the QP a controller without a table would solve at every sample. Used by `simulate` and
 * `audit` as the reference beside the table's law; never by the exploration.
 *
 *   min ½ zᵀHz + (Fθ + c)ᵀz   s.t.  G z ≤ w + Eθ
 */
import quadprog from 'quadprog';
import type { MpqpProblem } from '../mpqp/types.js';

export interface OnlineQpResult {
  feasible: boolean;
  /** the optimal z (empty when infeasible) */
  z: number[];
}

/** Solve the online QP at θ. quadprog factorises its Hessian in place, so every call builds its arrays afresh. */
export function solveOnlineQp(problem: MpqpProblem, theta: ArrayLike<number>): OnlineQpResult {
  const { nz, nc, ntheta: nt, H, F, G, w, E } = problem;
  const c = (problem as { c?: ArrayLike<number> }).c;
  const D: number[][] = new Array(nz + 1);
  const d: number[] = new Array(nz + 1).fill(0);
  D[0] = [];
  for (let i = 0; i < nz; i++) {
    const row = new Array<number>(nz + 1);
    row[0] = 0;
    for (let j = 0; j < nz; j++) row[j + 1] = H[i * nz + j];
    D[i + 1] = row;
    let s = c ? c[i] : 0;
    for (let j = 0; j < nt; j++) s += F[i * nt + j] * theta[j];
    d[i + 1] = -s;
  }
  // quadprog wants Aᵀz ≥ b0: column r of A is −G_r, b0_r = −(w_r + E_r θ)
  const rows = Math.max(nc, 1);
  const A: number[][] = new Array(nz + 1);
  A[0] = [];
  for (let j = 0; j < nz; j++) {
    const col = new Array<number>(rows + 1).fill(0);
    for (let r = 0; r < nc; r++) col[r + 1] = -G[r * nz + j];
    A[j + 1] = col;
  }
  const b0 = new Array<number>(rows + 1).fill(0);
  for (let r = 0; r < nc; r++) {
    let s = w[r];
    for (let j = 0; j < nt; j++) s += E[r * nt + j] * theta[j];
    b0[r + 1] = -s;
  }
  if (nc === 0) b0[1] = -1; // a constraint 0 ≥ −1 that always holds: quadprog needs at least one
  const res = quadprog.solveQP(D, d, A, b0, 0);
  if (res.message && res.message.length > 0) return { feasible: false, z: [] };
  const z = res.solution.slice(1);
  if (z.some((v) => !Number.isFinite(v))) return { feasible: false, z: [] };
  return { feasible: true, z };
}
