import { tol } from '../tol.js';
import { add, eye, mul, norm, solve, symmetrise, transpose, type Mat } from './dense.js';

/** Residual ‖AᵀPA − P − AᵀPB(R + BᵀPB)⁻¹BᵀPA + Q‖_F of the discrete algebraic Riccati equation. */
export function dareResidual(A: Mat, B: Mat, Q: Mat, R: Mat, P: Mat): number {
  const At = transpose(A);
  const Bt = transpose(B);
  const PA = mul(P, A);
  const BtPA = mul(Bt, PA);
  const K = solve(add(R, mul(Bt, mul(P, B))), BtPA);
  const rhs = add(add(mul(At, PA), mul(transpose(BtPA), K), -1), Q);
  return norm(add(rhs, P, -1));
}

/** K = (R + BᵀPB)⁻¹BᵀPA (common practice). */
export function lqrGainFromP(A: Mat, B: Mat, R: Mat, P: Mat): Mat {
  const Bt = transpose(B);
  return solve(add(R, mul(Bt, mul(P, B))), mul(Bt, mul(P, A)));
}

const MAX_DOUBLING_STEPS = 100;

/**
 * Discrete algebraic Riccati equation P = AᵀPA − AᵀPB(R + BᵀPB)⁻¹BᵀPA + Q by the structured
 * doubling algorithm (Chu, Fan, Lin & Wang, 2004):
 *   A₀ = A, G₀ = BR⁻¹Bᵀ, H₀ = Q;  W = I + G_k H_k;
 *   A_{k+1} = A_k W⁻¹ A_k,  G_{k+1} = G_k + A_k W⁻¹ G_k A_kᵀ,  H_{k+1} = H_k + A_kᵀ H_k W⁻¹ A_k;  H_k → P.
 * Converges quadratically to the stabilising solution when (A, B) is stabilisable and (A, Q)
 * has no unobservable mode on the unit circle. Throws when it does not converge or the residual
 * exceeds tol.riccatiResidual·(1 + ‖P‖).
 */
export function solveDare(A: Mat, B: Mat, Q: Mat, R: Mat): { P: Mat; K: Mat; residual: number } {
  const n = A.length;
  const I = eye(n);
  let Ak = A.map((r) => [...r]);
  let Gk = symmetrise(mul(B, solve(R, transpose(B))));
  let Hk = symmetrise(Q);
  let converged = false;
  for (let step = 0; step < MAX_DOUBLING_STEPS; step++) {
    const W = add(I, mul(Gk, Hk));
    const WiA = solve(W, Ak); // W⁻¹A_k
    const WiG = solve(W, Gk); // W⁻¹G_k
    const AkT = transpose(Ak);
    const Hn = symmetrise(add(Hk, mul(AkT, mul(Hk, WiA))));
    const Gn = symmetrise(add(Gk, mul(Ak, mul(WiG, AkT))));
    const An = mul(Ak, WiA);
    const change = norm(add(Hn, Hk, -1));
    Ak = An;
    Gk = Gn;
    Hk = Hn;
    if (!Hk.every((r) => r.every(Number.isFinite))) break;
    if (change <= Number.EPSILON * (1 + norm(Hk))) {
      converged = true;
      break;
    }
  }
  const P = Hk;
  const finite = P.every((r) => r.every(Number.isFinite));
  const residual = finite ? dareResidual(A, B, Q, R, P) : Infinity;
  if (!finite || residual > tol.riccatiResidual * (1 + norm(P)))
    throw new Error(
      `Riccati equation: no stabilising solution found (residual ${residual.toExponential(2)} > tol.riccatiResidual·(1+‖P‖) = ${(tol.riccatiResidual * (1 + (finite ? norm(P) : 0))).toExponential(2)}${converged ? '' : ', doubling did not converge'})`,
    );
  return { P, K: lqrGainFromP(A, B, R, P), residual };
}

/**
 * P = (A − BK)ᵀ P (A − BK) + Q + KᵀRK for a stabilising gain K, by Smith doubling:
 * P = Σ_j (Φᵀ)^j W Φ^j with Φ = A − BK, W = Q + KᵀRK, summed two blocks at a time.
 * The caller checks ρ(A − BK) < 1 first; the result's residual is checked here.
 */
export function solveLyapunovGain(A: Mat, B: Mat, Q: Mat, R: Mat, K: Mat): Mat {
  const Phi = add(A, mul(B, K), -1);
  const W = symmetrise(add(Q, mul(transpose(K), mul(R, K))));
  let P = W;
  let Pk = Phi;
  for (let step = 0; step < MAX_DOUBLING_STEPS; step++) {
    const next = symmetrise(add(P, mul(transpose(Pk), mul(P, Pk))));
    const change = norm(add(next, P, -1));
    P = next;
    Pk = mul(Pk, Pk);
    if (!P.every((r) => r.every(Number.isFinite))) break;
    if (change <= Number.EPSILON * (1 + norm(P))) break;
  }
  const residual = lyapunovResidual(Phi, W, P);
  if (!(residual <= tol.riccatiResidual * (1 + norm(P))))
    throw new Error(`Lyapunov equation: residual ${residual.toExponential(2)} exceeds tol.riccatiResidual·(1+‖P‖)`);
  return P;
}

/** ‖ΦᵀPΦ + W − P‖_F. */
export function lyapunovResidual(Phi: Mat, W: Mat, P: Mat): number {
  return norm(add(add(mul(transpose(Phi), mul(P, Phi)), W), P, -1));
}
