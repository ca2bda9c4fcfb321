import { describe, expect, it } from 'vitest';
import { tol } from '../../src/tol.js';
import { dareResidual, parseProblem, solveDare, solveLyapunovGain, lyapunovResidual } from '../../src/problem/index.js';
import { add, eye, mul, norm, solve, spectralRadius, transpose, unstabilisableMode } from '../../src/problem/dense.js';
import { randMat, randSpd, rng } from './rng.js';

/**
 * Scalar DARE p = a²p − a²b²p²/(r + b²p) + q. Multiplying by (r + b²p):
 *   b²p² + (r(1 − a²) − q b²) p − q r = 0,
 * whose positive root is the stabilising solution (derived here; common practice).
 */
function scalarDare(a: number, b: number, q: number, r: number): number {
  const beta = r * (1 - a * a) - q * b * b;
  return (-beta + Math.sqrt(beta * beta + 4 * b * b * q * r)) / (2 * b * b);
}

describe('discrete algebraic Riccati equation', () => {
  it('scalar plants match the closed-form root, and K = (r + b²p)⁻¹ b p a', () => {
    for (const [a, b, q, r] of [
      [1.3, 0.5, 2, 0.1],
      [0.8, 1, 1, 1],
      [1, 0.1, 1, 0.5],
      [-2, 3, 0.2, 4],
    ]) {
      const { P, K, residual } = solveDare([[a]], [[b]], [[q]], [[r]]);
      const p = scalarDare(a, b, q, r);
      expect(P[0][0]).toBeCloseTo(p, 9);
      expect(K[0][0]).toBeCloseTo((b * p * a) / (r + b * b * p), 9);
      expect(residual).toBeLessThanOrEqual(tol.riccatiResidual * (1 + p));
      expect(Math.abs(a - b * K[0][0])).toBeLessThan(1); // stabilising
    }
  });

  it('residual ≤ tol.riccatiResidual·(1+‖P‖) and A − BK stable on seeded random plants', () => {
    const r = rng(20261201);
    for (let trial = 0; trial < 12; trial++) {
      const n = 1 + (trial % 4);
      const m = 1 + (trial % 2);
      const A = randMat(r, n, n, 1.2);
      const B = randMat(r, n, m);
      const Q = randSpd(r, n, 0.1);
      const R = randSpd(r, m, 0.5);
      const { P, K, residual } = solveDare(A, B, Q, R);
      // residual recomputed independently of the solver's own report
      const res = dareResidual(A, B, Q, R, P);
      expect(res).toBe(residual);
      expect(res).toBeLessThanOrEqual(tol.riccatiResidual * (1 + norm(P)));
      const Kref = solve(add(R, mul(transpose(B), mul(P, B))), mul(transpose(B), mul(P, A)));
      expect(norm(add(K, Kref, -1))).toBeLessThan(1e-10 * (1 + norm(K)));
      expect(spectralRadius(add(A, mul(B, K), -1))).toBeLessThan(1);
    }
  });

  it('double integrator with PSD (rank-one) state weight still converges', () => {
    const A = [[1, 0.1], [0, 1]];
    const B = [[0.005], [0.1]];
    const { P, residual } = solveDare(A, B, [[1, 0], [0, 0]], [[0.1]]);
    expect(residual).toBeLessThanOrEqual(tol.riccatiResidual * (1 + norm(P)));
    expect(P[0][0]).toBeGreaterThan(1);
  });

  it('the model carries the LQR gain whenever the DARE has a stabilising solution', () => {
    const base = {
      plant: { A: [[1.1]], B: [[1]] },
      horizon: 2,
      weights: { state: [[1]], input: [[1]], terminal: 'stage' },
      parameters: { lower: [-1], upper: [1] },
    };
    const { model } = parseProblem(base, 'f.json');
    const p = scalarDare(1.1, 1, 1, 1);
    expect(model.lqrGain![0][0]).toBeCloseTo((p * 1.1) / (1 + p), 10);
    expect(model.P[0][0]).toBe(1); // stage terminal: P = Q
    const un = parseProblem({ ...base, plant: { A: [[1.1, 0], [0, 0.5]], B: [[0], [1]] }, weights: { ...base.weights, state: [[1, 0], [0, 1]] }, parameters: { lower: [-1, -1], upper: [1, 1] } }, 'f.json');
    expect(un.model.lqrGain).toBeNull();
  });
});

describe('Lyapunov equation for a given gain', () => {
  it('scalar closed form P = (q + k²r)/(1 − (a − bk)²) (geometric series; common practice)', () => {
    for (const [a, b, q, r, k] of [
      [1.2, 1, 1, 0.5, 0.7],
      [0.5, 2, 3, 1, 0],
      [-1.5, 0.5, 0.2, 2, -4],
    ]) {
      const P = solveLyapunovGain([[a]], [[b]], [[q]], [[r]], [[k]]);
      expect(P[0][0]).toBeCloseTo((q + k * k * r) / (1 - (a - b * k) ** 2), 9);
    }
  });

  it('matrix residual on seeded plants with the LQR gain', () => {
    const r = rng(7);
    for (let trial = 0; trial < 6; trial++) {
      const n = 2 + (trial % 3);
      const A = randMat(r, n, n, 1);
      const B = randMat(r, n, 1);
      const Q = randSpd(r, n, 0.2);
      const R = [[0.3]];
      const { K, P: Pdare } = solveDare(A, B, Q, R);
      const P = solveLyapunovGain(A, B, Q, R, K);
      const Phi = add(A, mul(B, K), -1);
      const W = add(Q, mul(transpose(K), mul(R, K)));
      expect(lyapunovResidual(Phi, W, P)).toBeLessThanOrEqual(tol.riccatiResidual * (1 + norm(P)));
      // with the optimal gain the Lyapunov solution is the Riccati solution (common practice)
      expect(norm(add(P, Pdare, -1))).toBeLessThan(1e-8 * (1 + norm(P)));
    }
  });
});

describe('stabilisability (PBH test: rank [A − λI, B] = n for every |λ| ≥ 1; common practice)', () => {
  const T = [[1, 0.3, -0.2], [0.5, 1, 0.1], [0.2, -0.4, 1]];
  const similar = (J: number[][], B: number[][]) => ({ A: mul(T, mul(J, solve(T, eye(3)))), B: mul(T, B) });

  it('finds an uncontrollable Jordan block at λ = 1 hidden by a similarity transform', () => {
    const { A, B } = similar([[1, 1, 0], [0, 1, 0], [0, 0, 0.5]], [[0], [0], [1]]);
    const bad = unstabilisableMode(A, B);
    expect(bad).not.toBeNull();
    expect(bad!.re).toBeCloseTo(1, 6);
  });

  it('finds an uncontrollable complex pair on the unit circle', () => {
    const c = Math.cos(0.7);
    const s = Math.sin(0.7);
    const { A, B } = similar([[c, -s, 0], [s, c, 0], [0, 0, 0.5]], [[0], [0], [1]]);
    const bad = unstabilisableMode(A, B);
    expect(bad).not.toBeNull();
    expect(Math.abs(bad!.im)).toBeCloseTo(s, 8);
  });

  it('accepts an uncontrollable mode that is stable, and the same plant solves the DARE', () => {
    const { A, B } = similar([[1.2, 0, 0], [0, 0.5, 0], [0, 0, 0.9]], [[1], [0], [1]]);
    expect(unstabilisableMode(A, B)).toBeNull();
    const Q = eye(3);
    const { P, residual } = solveDare(A, B, Q, [[1]]);
    expect(residual).toBeLessThanOrEqual(tol.riccatiResidual * (1 + norm(P)));
  });
});
