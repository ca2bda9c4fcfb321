import type { MpqpProblem } from './types.js';
import { choleskyInPlace, choleskySolveInPlace, dot2Add, dot2Value } from '../linalg/dense.js';

/**
 * A solver for the KKT system of the equality-constrained QP on an active set A,
 *   [H  G_Aᵀ] [dz]     [r1]
 *   [G_A  0 ] [dλ] = − [r2],
 * by the null-space method (Nocedal & Wright, "Numerical Optimization", §16.2; common practice):
 * Householder QR of G_Aᵀ = [Q1 Q2] [R; 0], then
 *   Q1ᵀdz = −R⁻ᵀ r2,  (Q2ᵀHQ2) y = −Q2ᵀ(r1 + H Q1 Q1ᵀdz),  dz = Q1 Q1ᵀdz + Q2 y,
 *   R dλ = −Q1ᵀ(r1 + H dz).
 * Its accuracy depends on G_A's condition number and the reduced Hessian's, not on that of
 * M_AA = G_A H⁻¹ G_Aᵀ (about G_A's squared), so it stays usable where κ(G_A) ≈ 2e9 puts M_AA past
 * double precision (campaign seed 1933). The factors are made once per active set (O(nz³)); each
 * solve is O(nz²). Null when R has a zero diagonal (G_A rank-deficient) or the reduced Hessian is
 * not positive definite. Householder QR written here on typed arrays rather than ml-matrix's
 * (a dependency already) because that works on its own matrix objects, and this runs in the
 * per-region kernels beside the other Float64Array code; tested against mathjs's lusolve.
 */
export interface KktSolver {
  /** dz (nz) and dλ (k) from r1 (nz) and r2 (k); the inputs are not changed */
  solve(r1: Float64Array, r2: Float64Array, dz: Float64Array, dl: Float64Array): void;
}

export function kktSolver(problem: MpqpProblem, A: readonly number[]): KktSolver | null {
  const { nz, H, G } = problem;
  const k = A.length;
  if (k > nz) return null;
  // Gt = G_Aᵀ (nz × k), column a = row A[a] of G; QR in place: R in the upper triangle, the
  // Householder vectors below it (v_a with v_a[a] = 1 implied), their scalars in tau
  const Gt = new Float64Array(nz * k);
  for (let a = 0; a < k; a++) for (let i = 0; i < nz; i++) Gt[i * k + a] = G[A[a] * nz + i];
  const tau = new Float64Array(k);
  for (let a = 0; a < k; a++) {
    let norm = 0;
    for (let i = a; i < nz; i++) norm = Math.hypot(norm, Gt[i * k + a]);
    if (norm === 0) return null;
    const alpha = Gt[a * k + a];
    const beta = alpha > 0 ? -norm : norm;
    // v = x − beta·e1, scaled so v[0] = 1; H_a = I − tau v vᵀ
    const v0 = alpha - beta;
    for (let i = a + 1; i < nz; i++) Gt[i * k + a] /= v0;
    tau[a] = (beta - alpha) / beta;
    Gt[a * k + a] = beta;
    for (let c = a + 1; c < k; c++) {
      let s = Gt[a * k + c];
      for (let i = a + 1; i < nz; i++) s += Gt[i * k + a] * Gt[i * k + c];
      s *= tau[a];
      Gt[a * k + c] -= s;
      for (let i = a + 1; i < nz; i++) Gt[i * k + c] -= s * Gt[i * k + a];
    }
  }
  // Q (nz × nz) explicitly: Q = H_0 H_1 … H_{k−1} applied to the identity from the last reflector
  const Q = new Float64Array(nz * nz);
  for (let i = 0; i < nz; i++) Q[i * nz + i] = 1;
  for (let a = k - 1; a >= 0; a--) {
    for (let c = 0; c < nz; c++) {
      let s = Q[a * nz + c];
      for (let i = a + 1; i < nz; i++) s += Gt[i * k + a] * Q[i * nz + c];
      s *= tau[a];
      Q[a * nz + c] -= s;
      for (let i = a + 1; i < nz; i++) Q[i * nz + c] -= s * Gt[i * k + a];
    }
  }
  const m = nz - k;
  // HQ = H·Q, reduced Hessian Hr = Q2ᵀ H Q2 and its Cholesky factor (lower, in place)
  const HQ = new Float64Array(nz * nz);
  for (let i = 0; i < nz; i++)
    for (let c = 0; c < nz; c++) {
      let s = 0;
      for (let l = 0; l < nz; l++) s += H[i * nz + l] * Q[l * nz + c];
      HQ[i * nz + c] = s;
    }
  const L = new Float64Array(m * m);
  for (let p = 0; p < m; p++)
    for (let q = 0; q <= p; q++) {
      let s = 0;
      for (let i = 0; i < nz; i++) s += Q[i * nz + k + p] * HQ[i * nz + k + q];
      L[p * m + q] = s;
    }
  if (!choleskyInPlace(L, m, 0)) return null;
  for (let a = 0; a < k; a++) if (Gt[a * k + a] === 0) return null;
  const y1 = new Float64Array(k);
  const t = new Float64Array(Math.max(m, k));
  const w = new Float64Array(nz);
  return {
    solve(r1, r2, dz, dl) {
      // Rᵀ y1 = −r2 (forward substitution; R is Gt's upper triangle)
      for (let a = 0; a < k; a++) {
        let s = -r2[a];
        for (let b = 0; b < a; b++) s -= Gt[b * k + a] * y1[b];
        y1[a] = s / Gt[a * k + a];
      }
      // w = r1 + H Q1 y1; t = −Q2ᵀ w; L Lᵀ y2 = t
      for (let i = 0; i < nz; i++) {
        let s = r1[i];
        for (let a = 0; a < k; a++) s += HQ[i * nz + a] * y1[a];
        w[i] = s;
      }
      for (let p = 0; p < m; p++) {
        let s = 0;
        for (let i = 0; i < nz; i++) s -= Q[i * nz + k + p] * w[i];
        t[p] = s;
      }
      choleskySolveInPlace(L, m, t);
      // dz = Q1 y1 + Q2 y2
      for (let i = 0; i < nz; i++) {
        let s = 0;
        for (let a = 0; a < k; a++) s += Q[i * nz + a] * y1[a];
        for (let p = 0; p < m; p++) s += Q[i * nz + k + p] * t[p];
        dz[i] = s;
      }
      // R dλ = −Q1ᵀ (r1 + H dz) (back substitution)
      for (let i = 0; i < nz; i++) {
        let s = r1[i];
        for (let l = 0; l < nz; l++) s += H[i * nz + l] * dz[l];
        w[i] = s;
      }
      for (let a = k - 1; a >= 0; a--) {
        let s = 0;
        for (let i = 0; i < nz; i++) s -= Q[i * nz + a] * w[i];
        for (let b = a + 1; b < k; b++) s -= Gt[a * k + b] * dl[b];
        dl[a] = s / Gt[a * k + a];
      }
    },
  };
}

/** refineKkt's work vectors (one set per thread, grown on demand; nothing outlives a call) */
const work = { n: 0, r1: new Float64Array(0), r2: new Float64Array(0), dz: new Float64Array(0), dl: new Float64Array(0) };
/** the unit roundoff of double, 2^−52 (one unit in the last place of 1) */
const EPS = 2 ** -52;

/**
 * Iterative refinement of one solution (z, λ) of the KKT system on active set A (common practice
 * for a system solved through a less accurate factor; Golub & Van Loan, "Matrix Computations", on
 * iterative improvement): the residuals
 *   r1 = Hz + f + G_Aᵀλ (stationarity),  r2 = G_A z − e (the active rows tight)
 * in twice the working precision (Dot2: a residual formed in double would be rounding noise of the
 * size the refinement is to remove), then the correction from `solver`. z_i is z[zo + i·zs] and
 * λ_a is l[lo + a·ls]; `seed1(i)` starts row i of r1 with f_i's terms (dot2Start, dot2Add) and
 * `seed2(a)` row a of r2 with −e_a's. A step is applied unless every correction is within one unit
 * in the last place of its entry, or the step no longer halves the largest corrections of z and of
 * λ (rounding noise), or a correction is not finite; at most `maxSteps`. Returns the steps applied.
 */
export function refineKkt(
  problem: MpqpProblem,
  A: readonly number[],
  solver: KktSolver,
  z: Float64Array,
  zs: number,
  zo: number,
  l: Float64Array,
  ls: number,
  lo: number,
  seed1: (i: number) => void,
  seed2: (a: number) => void,
  maxSteps: number,
): number {
  const { nz, H, G } = problem;
  const k = A.length;
  if (work.n < nz + k) {
    const n = 2 * (nz + k);
    work.n = n;
    work.r1 = new Float64Array(n);
    work.r2 = new Float64Array(n);
    work.dz = new Float64Array(n);
    work.dl = new Float64Array(n);
  }
  const { r1, r2, dz, dl } = work;
  let zPrev = Infinity;
  let lPrev = Infinity;
  let steps = 0;
  for (; steps < maxSteps; steps++) {
    for (let i = 0; i < nz; i++) {
      seed1(i);
      for (let q = 0; q < nz; q++) dot2Add(H[i * nz + q], z[zo + q * zs]);
      for (let a = 0; a < k; a++) dot2Add(G[A[a] * nz + i], l[lo + a * ls]);
      r1[i] = dot2Value();
    }
    for (let a = 0; a < k; a++) {
      const o = A[a] * nz;
      seed2(a);
      for (let q = 0; q < nz; q++) dot2Add(G[o + q], z[zo + q * zs]);
      r2[a] = dot2Value();
    }
    solver.solve(r1, r2, dz, dl);
    let done = true;
    let lMax = 0;
    for (let a = 0; a < k; a++) {
      lMax = Math.max(lMax, Math.abs(dl[a]));
      if (Math.abs(dl[a]) > EPS * Math.abs(l[lo + a * ls])) done = false;
    }
    let zMax = 0;
    for (let i = 0; i < nz; i++) {
      zMax = Math.max(zMax, Math.abs(dz[i]));
      if (Math.abs(dz[i]) > EPS * Math.abs(z[zo + i * zs])) done = false;
    }
    if (done || (zMax > 0.5 * zPrev && lMax > 0.5 * lPrev) || !Number.isFinite(zMax + lMax)) break;
    zPrev = zMax;
    lPrev = lMax;
    for (let a = 0; a < k; a++) l[lo + a * ls] += dl[a];
    for (let i = 0; i < nz; i++) z[zo + i * zs] += dz[i];
  }
  return steps;
}
