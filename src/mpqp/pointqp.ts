import type { MpqpProblem } from './types.js';
import { spdInverse, matMul, transpose, choleskyOfBlock, choleskySolveStrided, dot2Add, dot2Start, householderReduce, householderForm } from '../linalg/dense.js';
import { tol } from '../tol.js';
import { kktSolver, refineKkt } from './kkt.js';

/**
 * θ-independent data of the mpQP, computed once: H⁻¹, K = H⁻¹Gᵀ, M = G H⁻¹ Gᵀ,
 * H⁻¹F, S = E + G H⁻¹ F, H⁻¹c and wc = w + G H⁻¹ c (the right-hand side seen from the
 * unconstrained minimiser). Both the point QP and the critical-region builder work on these.
 */
export interface QpWorkspace {
  problem: MpqpProblem;
  Hinv: Float64Array; // nz×nz
  K: Float64Array; // nz×nc
  M: Float64Array; // nc×nc
  HinvF: Float64Array; // nz×nt
  S: Float64Array; // nc×nt
  Hinvc: Float64Array; // nz
  wc: Float64Array; // nc
}

const workspaces = new WeakMap<MpqpProblem, QpWorkspace>();

export function qpWorkspace(problem: MpqpProblem): QpWorkspace {
  const hit = workspaces.get(problem);
  if (hit) return hit;
  const { nz, nc, ntheta: nt } = problem;
  const Hinv = spdInverse(problem.H, nz, tol.pd);
  if (!Hinv) throw new Error('the condensed Hessian H is not positive definite');
  const Gt = transpose(problem.G, nc, nz);
  const K = matMul(Hinv, Gt, nz, nz, nc);
  const M = matMul(problem.G, K, nc, nz, nc);
  const HinvF = matMul(Hinv, problem.F, nz, nz, nt);
  const GHF = matMul(problem.G, HinvF, nc, nz, nt);
  const S = new Float64Array(nc * nt);
  for (let i = 0; i < nc * nt; i++) S[i] = problem.E[i] + GHF[i];
  const Hinvc = matMul(Hinv, problem.c, nz, nz, 1);
  const wc = matMul(problem.G, Hinvc, nc, nz, 1);
  for (let i = 0; i < nc; i++) wc[i] += problem.w[i];
  const ws = { problem, Hinv, K, M, HinvF, S, Hinvc, wc };
  workspaces.set(problem, ws);
  return ws;
}

/**
 * The nonzeros of each row of G (CSR: row i's column indices are idx[ptr[i] .. ptr[i + 1]), their
 * values G[i·nz + idx[e]] in val[e], contiguous for the row sums), made once per problem; the arrays
 * are shared, read only.
 */
const gNonzeros = new WeakMap<MpqpProblem, { ptr: Int32Array; idx: Int32Array; val: Float64Array }>();
export function rowNonzeros(problem: MpqpProblem): { ptr: Int32Array; idx: Int32Array; val: Float64Array } {
  const hit = gNonzeros.get(problem);
  if (hit) return hit;
  const { G, nc, nz } = problem;
  const ptr = new Int32Array(nc + 1);
  const cols: number[] = [];
  for (let i = 0; i < nc; i++) {
    for (let q = 0; q < nz; q++) if (G[i * nz + q] !== 0) cols.push(q);
    ptr[i + 1] = cols.length;
  }
  const idx = Int32Array.from(cols);
  const val = new Float64Array(idx.length);
  for (let i = 0; i < nc; i++) for (let e = ptr[i]; e < ptr[i + 1]; e++) val[e] = G[i * nz + idx[e]];
  const out = { ptr, idx, val };
  gNonzeros.set(problem, out);
  return out;
}

export interface PointQpResult {
  feasible: boolean;
  z: Float64Array;
  /** the final working set of the dual method: ascending, linearly independent rows */
  activeSet: number[];
  /** multipliers, one per constraint row (0 off the active set) */
  lambda: Float64Array;
  iterations: number;
}

/**
 * Solve the QP at one θ by a dual active-set method in the manner of Goldfarb & Idnani (1983):
 * start at the unconstrained minimiser, add the most violated row, take full or partial steps
 * (dropping rows whose multiplier would turn negative), until no row is violated. The working
 * set stays linearly independent, so the result satisfies LICQ. Each step solves the small
 * system M_AA dλ = −M_Ap on the precomputed M = G H⁻¹ Gᵀ. Where M_AA is too ill-conditioned for
 * that to be trusted, the two decisions that depend on it are made from a Householder QR of G_Aᵀ
 * (kept row by row as A changes, formed only when first needed): whether the row to add is in
 * span(G_A), and, for such a row with no multiplier to drop, whether θ is infeasible (a Farkas
 * certificate, z-independent; without one, z is re-solved on A before θ is called infeasible). With `refine` (the default) the
 * returned z and λ are refined on the final working set (refinePoint); callers that read only the
 * working set and feasibility pass false.
 */
export function solvePointQp(problem: MpqpProblem, theta: ArrayLike<number>, start?: readonly number[], refine = true): PointQpResult {
  const ws = qpWorkspace(problem);
  const { nz, nc, ntheta: nt } = problem;
  const { K, M, HinvF, Hinvc } = ws;
  const z = new Float64Array(nz);
  for (let i = 0; i < nz; i++) {
    let s = -Hinvc[i];
    for (let j = 0; j < nt; j++) s -= HinvF[i * nt + j] * theta[j];
    z[i] = s;
  }
  // rhs_i = w_i + E_i θ
  // rhs, isActive, dλ, dz: per-thread scratch (every entry read is written first; none is returned)
  if (qpScratch.rhs.length < nc) {
    qpScratch.rhs = new Float64Array(2 * nc);
    qpScratch.isActive = new Uint8Array(2 * nc);
  }
  const kMax = Math.max(nz + 1, start ? start.length : 0);
  if (qpScratch.dz.length < kMax) {
    qpScratch.dz = new Float64Array(2 * kMax);
    qpScratch.dlam = new Float64Array(2 * kMax);
    qpScratch.lam = new Float64Array(2 * kMax);
  }
  const rhs = qpScratch.rhs;
  for (let i = 0; i < nc; i++) {
    let s = problem.w[i];
    for (let j = 0; j < nt; j++) s += problem.E[i * nt + j] * theta[j];
    rhs[i] = s;
  }
  const lambda = new Float64Array(nc);
  const active: number[] = [];
  const isActive = qpScratch.isActive;
  isActive.fill(0, 0, nc);
  const maxIter = 10 * (nc + nz) + 20;
  const dlam = qpScratch.dlam;
  const dz = qpScratch.dz;
  // the factor of M_AA, row stride nz + 1 (or the start set's size), kept across steps: a step appends row p or drops one, so
  // the rows above the first change are the same bits and only the rows from there are formed
  const stride = Math.max(nz + 1, start ? start.length : 0);
  if (factorScratch.l.length < stride * stride) {
    factorScratch.l = new Float64Array(stride * stride);
    factorScratch.piv = new Float64Array(stride);
  }
  const chol = factorScratch.l;
  const piv = factorScratch.piv;
  let valid = 0;
  // G_Aᵀ column by column in Householder form (row a of qv = reflector a, of G row active[a]), for the
  // rank decision and the infeasibility certificate; rows 0 … qrValid − 1 are current (a drop keeps
  // the reflectors above it, as `valid`)
  if (qrScratch.tau.length < stride) {
    qrScratch.v = new Float64Array(stride * nz);
    qrScratch.tau = new Float64Array(stride);
  }
  const qv = qrScratch.v;
  const qtau = qrScratch.tau;
  let qrValid = 0;
  // z was made the solution on the working set by the KKT solver and has not moved since
  let zSolved = false;
  let it = 0;
  const { G } = problem;
  const { ptr, idx, val } = rowNonzeros(problem);
  // ‖G_p‖² of the last reduceP
  let rowSq = 0;
  // G_p reduced by the reflectors of A = active[0 … k − 1] into row k of qv (the reflectors of rows
  // qrValid … k − 1 formed first); returns G_p's distance to span(G_A). k ≤ nz (qv has nz + 1 rows).
  const reduceP = (p: number, k: number): number => {
    for (let a = qrValid; a < k; a++) {
      const o = a * nz;
      const g = active[a] * nz;
      for (let i = 0; i < nz; i++) qv[o + i] = G[g + i];
      householderForm(qv, qtau, nz, a, householderReduce(qv, qtau, nz, a, qv, o));
    }
    qrValid = k;
    const o = k * nz;
    let gg = 0;
    for (let i = 0; i < nz; i++) {
      const x = G[p * nz + i];
      qv[o + i] = x;
      gg += x * x;
    }
    rowSq = gg;
    return householderReduce(qv, qtau, nz, k, qv, o);
  };
  // G_i z − rhs_i over G_i's nonzeros, in column order: the same partial sums as over every column
  // (a zero product changes at most the sign of a zero sum), so the same value unless it ends at
  // zero, which is redone over every column; likewise when z is not finite (0·∞ is NaN)
  let zFinite = true;
  const checkZ = (): void => {
    zFinite = true;
    for (let j = 0; j < nz && zFinite; j++) zFinite = Number.isFinite(z[j]);
  };
  const slack = (i: number): number => {
    let s = -rhs[i];
    if (zFinite) {
      for (let e = ptr[i], e1 = ptr[i + 1]; e < e1; e++) s += val[e] * z[idx[e]];
      if (s !== 0) return s;
      s = -rhs[i];
    }
    for (let j = 0; j < nz; j++) s += G[i * nz + j] * z[j];
    return s;
  };
  if (start && start.length > 0) {
    checkZ();
    valid = warmStart(ws, start, slack, z, lambda, active, isActive, chol, piv, stride);
  }
  for (; it < maxIter; it++) {
    checkZ();
    // most violated row
    let p = -1;
    let worst: number = tol.primal;
    for (let i = 0; i < nc; i++) {
      if (isActive[i]) continue;
      const s = slack(i);
      if (s > worst) {
        worst = s;
        p = i;
      }
    }
    if (p < 0) {
      // z and λ refined on the final working set
      const k = active.length;
      if (refine && k > 0) refinePoint(ws, theta, active, z, lambda);
      return { feasible: true, z, activeSet: sortRows(active.slice()), lambda, iterations: it };
    }
    // inner loop: bring row p to equality
    let guard = 0;
    for (;;) {
      if (++guard > maxIter) return { feasible: false, z, activeSet: [], lambda, iterations: it };
      const k = active.length;
      // dλ solves M_AA dλ = −M_Ap
      for (let a = 0; a < k; a++) dlam[a] = -M[active[a] * nc + p];
      if (k > 0) {
        if (!choleskyOfBlock(M, nc, active, k, chol, stride, piv, valid, tol.rank)) return { feasible: false, z, activeSet: [], lambda, iterations: it };
        valid = k;
        choleskySolveStrided(chol, stride, k, dlam);
      }
      // q = M_pp + M_pA dλ = −G_p dz (≥ 0)
      let q = M[p * nc + p];
      for (let a = 0; a < k; a++) q += M[p * nc + active[a]] * dlam[a];
      for (let i = 0; i < nz; i++) {
        let s = -K[i * nc + p];
        for (let a = 0; a < k; a++) s -= K[i * nc + active[a]] * dlam[a];
        dz[i] = s;
      }
      // Rank decision. q is G_p's squared distance to span(G_A) in the metric of M = G H⁻¹ Gᵀ, and p
      // counts as dependent when q ≤ tol.rank·(1 + M_pp). q is formed through M_AA, whose condition
      // number is about κ(G_A)²: its rounding error is up to about (k+1)ε(√M_pp + ‖L_AA‖_F‖dλ‖)²
      // (Cholesky's backward error |ΔM| ≤ γ_{k+1}|L||Lᵀ|, Higham, "Accuracy and Stability of Numerical
      // Algorithms", Thm 10.3, carried to the Schur complement M_pp − M_pA M_AA⁻¹ M_Ap; ‖L_AA‖_F² is
      // trace M_AA), taken 10 times for the solve's own rounding. Where q is within that of the
      // threshold the test cannot be trusted (seed 1933, κ(G_A) ≈ 2e9: q = 4.7e-10 against 1.1e-10
      // for a 7th row in 6 unknowns, with the bound at 1e-4), and the decision is made in the row
      // space instead: p is dependent when its squared Euclidean distance ρ² to span(G_A) is at most
      // tol.rank·‖G_p‖², ρ from the Householder QR of G_Aᵀ (reduceP), as accurate as the orthogonal
      // factor. Elsewhere the decision is q's, as before.
      const thr = tol.rank * (1 + M[p * nc + p]);
      let dependent = q <= thr;
      let reduced = false;
      let rho = 0;
      if (k > 0) {
        let tr = 0;
        let dd = 0;
        for (let a = 0; a < k; a++) {
          tr += M[active[a] * nc + active[a]];
          dd += dlam[a] * dlam[a];
        }
        const e = Math.sqrt(M[p * nc + p]) + Math.sqrt(tr * dd);
        if (Math.abs(q - thr) <= 10 * (k + 1) * EPS * e * e && k <= nz) {
          rho = reduceP(p, k);
          reduced = true;
          dependent = rho * rho <= tol.rank * rowSq;
        }
      }
      // partial step: the first active multiplier to reach zero
      let t2 = Infinity;
      let drop = -1;
      for (let a = 0; a < k; a++) {
        if (dlam[a] < 0) {
          const t = lambda[active[a]] / -dlam[a];
          if (t < t2) {
            t2 = t;
            drop = a;
          }
        }
      }
      checkZ();
      const sp = slack(p);
      const t1 = dependent ? Infinity : sp / q;
      if (!Number.isFinite(t1) && drop < 0) {
        // p is in span(G_A) and no multiplier blocks. The dual method calls θ infeasible here, which
        // holds when z is on A's equalities; but the steps that reached z came through M_AA, whose
        // condition number is κ(G_A)²: where that is past 1/u, z can be far off them (seed 1933: u(0)
        // −52.5 for −60.6 at the vertex, and a satisfied row looked violated by 0.05). So the decision
        // is made without z: Farkas' lemma (common practice) on G_p = Σ μ_a G_a from the QR of G_Aᵀ
        // (R μ = Q1ᵀG_pᵀ): with every μ_a ≤ 0, G_a z ≤ rhs_a on A forces G_p z ≥ Σ μ_a rhs_a, so
        // Σ μ_a rhs_a − rhs_p > tol.primal proves no z satisfies A and p (O(k²)).
        if (k <= nz && !reduced) {
          rho = reduceP(p, k);
          reduced = true;
        }
        if (k <= nz && farkasInfeasible(qv, nz, k, active, rhs, p)) return { feasible: false, z, activeSet: [], lambda, iterations: it };
        // Otherwise (no certificate), z and λ_A are made the solution on A by the null-space KKT solver
        // (refinePoint, O(nz³)) and p's slack read again; if p then holds, the dual method goes on from
        // there. Only when no step has been taken for p (λ_p = 0, so (z, λ_A) is A's KKT pair) and at
        // most once per z (a step clears `zSolved`).
        if (!zSolved && lambda[p] === 0 && k > 0 && refinePoint(ws, theta, active, z, lambda)) {
          zSolved = true;
          checkZ();
          if (!(slack(p) > tol.primal)) break;
        }
        return { feasible: false, z, activeSet: [], lambda, iterations: it };
      }
      const t = Math.min(t1, t2);
      if (Number.isFinite(t1)) {
        for (let i = 0; i < nz; i++) z[i] += t * dz[i];
        zSolved = false;
      }
      for (let a = 0; a < k; a++) lambda[active[a]] += t * dlam[a];
      lambda[p] += t;
      if (t1 <= t2) {
        // p joins A; when G_p was reduced, its reflector completes the QR (else the QR is rows 0 … qrValid − 1 still)
        if (reduced) {
          householderForm(qv, qtau, nz, k, rho);
          qrValid = k + 1;
        }
        active.push(p);
        isActive[p] = 1;
        break;
      }
      // drop the blocking row and go on with p
      const r = active[drop];
      lambda[r] = 0;
      isActive[r] = 0;
      active.splice(drop, 1);
      if (valid > drop) valid = drop;
      if (qrValid > drop) qrValid = drop;
    }
  }
  return { feasible: false, z, activeSet: [], lambda, iterations: it };
}

/**
 * Iterative refinement of the point QP's solution on its final working set A (as `refineLaw` in
 * region.ts does for a region's law): the KKT residuals r1 = Hz + Fθ + c + G_Aᵀλ_A and
 * r2 = G_A z − w_A − E_A θ in twice the working precision (Dot2), the correction from the KKT
 * system by the null-space method (kkt.ts: QR of G_Aᵀ, O(nz³) once per call); while every
 * correction is not yet within an ulp of its entry and the corrections still halve, at most 4 steps.
 * Without it, z on an ill-conditioned working set was off by up to 0.2 where |z| ≈ 2.6e6 (relative
 * 8e-8; low-gain-output-cap, against the exact KKT solution in mathjs BigNumber), with it 1e-13 relative.
 * The exploration reads only the working set and passes refine = false: refining every point QP
 * cost +10 % on the 2-D 4 261-region solve (glider-2d-n40 1.00 → 1.12 s) and +4 % on boom-4d-n8,
 * and a gate on the factor's smallest scaled pivot (< 1e-4) missed working sets that needed it.
 */
function refinePoint(ws: QpWorkspace, theta: ArrayLike<number>, A: number[], z: Float64Array, lambda: Float64Array): boolean {
  const { problem } = ws;
  const { ntheta: nt, F, c, E, w } = problem;
  const solver = kktSolver(problem, A);
  if (!solver) return false;
  // λ of the working set packed (lambda holds one entry per row)
  const lam = Float64Array.from(A, (r) => lambda[r]);
  const seed1 = (i: number): void => {
    dot2Start(c[i]);
    for (let j = 0; j < nt; j++) dot2Add(F[i * nt + j], theta[j]);
  };
  const seed2 = (a: number): void => {
    dot2Start(-w[A[a]]);
    for (let j = 0; j < nt; j++) dot2Add(-E[A[a] * nt + j], theta[j]);
  };
  refineKkt(problem, A, solver, z, 1, 0, lam, 1, 0, seed1, seed2, 4);
  A.forEach((r, a) => (lambda[r] = lam[a]));
  return true;
}

/** the machine epsilon of double, 2^−52 (one unit in the last place of 1; twice the unit roundoff u) */
const EPS = 2 ** -52;

/** solvePointQp's work arrays that it does not return (one set per thread, grown on demand; nothing outlives a call) */
const qpScratch = { rhs: new Float64Array(0), isActive: new Uint8Array(0), dlam: new Float64Array(0), dz: new Float64Array(0), lam: new Float64Array(0) };

/** solvePointQp's Householder reflectors of G_Aᵀ (one set per thread, grown on demand; nothing outlives a call) */
const qrScratch = { v: new Float64Array(0), tau: new Float64Array(0), mu: new Float64Array(0) };

/**
 * Farkas certificate that the rows A ∪ {p} admit no z, for a row p in span(G_A): G_p = Σ μ_a G_a with
 * R μ = Q1ᵀG_pᵀ (back substitution; qv as solvePointQp leaves it: column a of R in entries 0 … a of
 * row a, Q1ᵀG_pᵀ in entries 0 … k − 1 of row k). When every μ_a ≤ 0 (to tol.dual relative to the
 * largest), any z with G_A z ≤ rhs_A has G_p z ≥ Σ μ_a rhs_a, so Σ μ_a rhs_a − rhs_p > tol.primal
 * (p violated by more than the feasibility tolerance, as the main loop counts it) proves θ infeasible.
 * False when that does not hold (or R has a zero pivot): no certificate.
 */
function farkasInfeasible(qv: Float64Array, nz: number, k: number, active: readonly number[], rhs: Float64Array, p: number): boolean {
  if (qrScratch.mu.length < k) qrScratch.mu = new Float64Array(2 * k);
  const mu = qrScratch.mu;
  const o = k * nz;
  let big = 0;
  for (let a = k - 1; a >= 0; a--) {
    let s = qv[o + a];
    for (let c = a + 1; c < k; c++) s -= qv[c * nz + a] * mu[c];
    const r = qv[a * nz + a];
    if (r === 0) return false;
    mu[a] = s / r;
    big = Math.max(big, Math.abs(mu[a]));
  }
  let v = -rhs[p];
  for (let a = 0; a < k; a++) {
    if (mu[a] > tol.dual * big) return false;
    v += mu[a] * rhs[active[a]];
  }
  return v > tol.primal;
}

/** solvePointQp's factor of M_AA and its pivots (one per thread, grown on demand; nothing outlives a call) */
const factorScratch = { l: new Float64Array(0), piv: new Float64Array(0) };

/**
 * Warm start of the dual method from a working set W (a neighbour's active set): the pair
 * z_W(θ), λ_W(θ) of the equality-constrained QP on W is dual feasible when λ_W ≥ 0. Rows are
 * dropped, most negative multiplier first, until that holds (or W is empty); a W whose M_WW is
 * singular is not used (cold start). From there the usual iterations add violated rows, so the
 * result is the same optimum as from a cold start, in a few steps when θ is near W's region.
 */
function warmStart(ws: QpWorkspace, start: readonly number[], slack: (i: number) => number, z: Float64Array, lambda: Float64Array, active: number[], isActive: Uint8Array, chol: Float64Array, piv: Float64Array, stride: number): number {
  const { nz, nc } = ws.problem;
  const { K, M } = ws;
  const W = [...start];
  // M_WW λ = −(rhs_W − G_W z0), z0 = −H⁻¹Fθ the unconstrained minimiser already in z: each row's
  // right-hand side (its slack at z0) formed once, since z0 does not change here
  const r0: number[] = [];
  for (let a = 0; a < W.length; a++) r0.push(slack(W[a]));
  const lam = qpScratch.lam; // sized for the start set by solvePointQp
  // the factor of M_WW (solvePointQp's, row stride `stride`): a drop keeps the rows above it
  let valid = 0;
  for (;;) {
    const k = W.length;
    if (k === 0) return 0;
    for (let a = 0; a < k; a++) lam[a] = r0[a];
    if (!choleskyOfBlock(M, nc, W, k, chol, stride, piv, valid, tol.rank)) return 0;
    valid = k;
    choleskySolveStrided(chol, stride, k, lam);
    let worst = -1;
    for (let a = 0; a < k; a++) if (lam[a] < 0 && (worst < 0 || lam[a] < lam[worst])) worst = a;
    if (worst >= 0) {
      W.splice(worst, 1);
      r0.splice(worst, 1);
      if (valid > worst) valid = worst;
      continue;
    }
    for (let i = 0; i < nz; i++) {
      let s = 0;
      for (let a = 0; a < k; a++) s -= K[i * nc + W[a]] * lam[a];
      z[i] += s;
    }
    for (let a = 0; a < k; a++) {
      lambda[W[a]] = lam[a];
      active.push(W[a]);
      isActive[W[a]] = 1;
    }
    // the working set is W in this order: the factor's rows are the main loop's first M_AA's
    return k;
  }
}

/**
 * Sort an array of row indices ascending in place and return it (insertion sort: the lists are short
 * and mostly sorted, and no comparator is called; numbers in ascending order are one sequence
 * whatever the algorithm, so the result is that of `sort((x, y) => x − y)`).
 */
export function sortRows(a: number[]): number[] {
  for (let i = 1; i < a.length; i++) {
    const v = a[i];
    let j = i - 1;
    while (j >= 0 && a[j] > v) {
      a[j + 1] = a[j];
      j--;
    }
    a[j + 1] = v;
  }
  return a;
}

export function isFeasibleAt(problem: MpqpProblem, theta: ArrayLike<number>): boolean {
  return solvePointQp(problem, theta).feasible;
}
