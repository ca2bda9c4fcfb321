import { describe, expect, it } from 'vitest';
import { discretiseZoh, parseProblem } from '../../src/problem/index.js';

describe('zero-order-hold discretisation', () => {
  it('double integrator: A_d = [[1, T], [0, 1]], B_d = [[T²/2], [T]]', () => {
    // closed form of exp([[0,1],[0,0]]T) and ∫₀ᵀ e^{As} B ds (handbook formula; common practice)
    for (const T of [0.01, 0.1, 0.5, 2]) {
      const { A, B } = discretiseZoh([[0, 1], [0, 0]], [[0], [1]], T);
      expect(A[0][0]).toBeCloseTo(1, 13);
      expect(A[0][1]).toBeCloseTo(T, 13);
      expect(A[1][0]).toBeCloseTo(0, 13);
      expect(A[1][1]).toBeCloseTo(1, 13);
      expect(B[0][0]).toBeCloseTo((T * T) / 2, 13);
      expect(B[1][0]).toBeCloseTo(T, 13);
    }
  });

  it('first-order lag τẋ = −x + K u: a = e^(−T/τ), b = K(1 − e^(−T/τ))', () => {
    // handbook formula for the step-invariant model of a first-order lag (common practice)
    for (const [tau, K, T] of [
      [0.7, 2.5, 0.1],
      [3, 0.4, 1.2],
      [0.05, 10, 0.2],
    ]) {
      const { A, B } = discretiseZoh([[-1 / tau]], [[K / tau]], T);
      expect(A[0][0]).toBeCloseTo(Math.exp(-T / tau), 12);
      expect(B[0][0]).toBeCloseTo(K * (1 - Math.exp(-T / tau)), 12);
    }
  });

  it('harmonic oscillator: A_d is the rotation by ωT (analytic solution; common practice)', () => {
    const w = 3;
    const T = 0.25;
    const { A, B } = discretiseZoh([[0, w], [-w, 0]], [[0], [w]], T);
    expect(A[0][0]).toBeCloseTo(Math.cos(w * T), 12);
    expect(A[0][1]).toBeCloseTo(Math.sin(w * T), 12);
    expect(A[1][0]).toBeCloseTo(-Math.sin(w * T), 12);
    // B_d = ∫₀ᵀ e^{As} [0; w] ds = [1 − cos ωT; sin ωT]
    expect(B[0][0]).toBeCloseTo(1 - Math.cos(w * T), 12);
    expect(B[1][0]).toBeCloseTo(Math.sin(w * T), 12);
  });

  it('a continuous problem file is discretised before the model is built', () => {
    const { model } = parseProblem(
      {
        plant: { A: [[-2]], B: [[3]], timeDomain: 'continuous', sampleTime: 0.3 },
        horizon: 2,
        weights: { state: [[1]], input: [[1]] },
        parameters: { lower: [-1], upper: [1] },
      },
      'lag.json',
    );
    // τ = 0.5, K = 1.5 (first-order lag, handbook formula)
    expect(model.A[0][0]).toBeCloseTo(Math.exp(-0.6), 12);
    expect(model.B[0][0]).toBeCloseTo(1.5 * (1 - Math.exp(-0.6)), 12);
    expect(model.sampleTime).toBe(0.3);
    expect(model.name).toBe('lag');
  });
});
