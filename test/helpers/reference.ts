import { createRequire } from 'node:module';
import type { MpqpProblem } from '../../src/mpqp/types.js';
import { lpMaximizeReference } from '../../src/lp/reference.js';

const require = createRequire(import.meta.url);
// quadprog: a JavaScript port of Goldfarb & Idnani's dual method (1983), the online-QP reference.
// Its arrays are 1-based; it minimises ½bᵀDb − dᵀb subject to Aᵀb ≥ b0.
// eslint-disable-next-line @typescript-eslint/no-explicit-any
const quadprog: any = require('quadprog');

/** Online QP at θ by quadprog: min ½zᵀHz + (Fθ + c)ᵀz s.t. G z ≤ w + Eθ. */
export function qpReference(problem: MpqpProblem, theta: ArrayLike<number>): { feasible: boolean; z: number[] } {
  const { nz, nc, ntheta: nt } = problem;
  const D: number[][] = [[]];
  const d: number[] = [0];
  for (let i = 0; i < nz; i++) {
    const row = [0];
    for (let j = 0; j < nz; j++) row.push(problem.H[i * nz + j]);
    D.push(row);
    let s = problem.c[i];
    for (let j = 0; j < nt; j++) s += problem.F[i * nt + j] * theta[j];
    d.push(-s);
  }
  const Amat: number[][] = [[]];
  for (let j = 0; j < nz; j++) {
    const col = [0];
    for (let i = 0; i < nc; i++) col.push(-problem.G[i * nz + j]);
    Amat.push(col);
  }
  const b0 = [0];
  for (let i = 0; i < nc; i++) {
    let s = problem.w[i];
    for (let j = 0; j < nt; j++) s += problem.E[i * nt + j] * theta[j];
    b0.push(-s);
  }
  if (nc === 0) {
    Amat.forEach((c, j) => j > 0 && c.push(0));
    b0.push(-1);
  }
  const res = quadprog.solveQP(D, d, Amat, b0, 0);
  if (res.message && res.message.length > 0) return { feasible: false, z: [] };
  return { feasible: true, z: res.solution.slice(1) };
}

/** Feasibility of the MPC at θ by an LP in z (javascript-lp-solver): max s s.t. G z + s·1 ≤ w + Eθ, s ≤ 1; feasible when s ≥ −1e-9. */
export function lpFeasibleReference(problem: MpqpProblem, theta: ArrayLike<number>): boolean {
  const { nz, nc, ntheta: nt } = problem;
  const n = nz + 1;
  const m = nc + 1;
  const A = new Float64Array(m * n);
  const b = new Float64Array(m);
  for (let i = 0; i < nc; i++) {
    for (let j = 0; j < nz; j++) A[i * n + j] = problem.G[i * nz + j];
    A[i * n + nz] = 1;
    let s = problem.w[i];
    for (let j = 0; j < nt; j++) s += problem.E[i * nt + j] * theta[j];
    b[i] = s;
  }
  A[nc * n + nz] = 1;
  b[nc] = 1;
  const c = new Float64Array(n);
  c[nz] = 1;
  const r = lpMaximizeReference(c, A, b, m, n);
  return r.status === 'optimal' && r.x[nz] >= -1e-9;
}
