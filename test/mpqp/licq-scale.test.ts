import { describe, it, expect } from 'vitest';
import { buildRegion } from '../../src/mpqp/region.js';
import { qpWorkspace, solvePointQp } from '../../src/mpqp/pointqp.js';
import { spdInverse } from '../../src/linalg/dense.js';
import { regionContains } from '../../src/table/locator.js';
import { tol } from '../../src/tol.js';
import type { MpqpProblem } from '../../src/mpqp/types.js';
import { qpReference } from '../helpers/reference.js';

// Two conditioned rows ([G_i, −E_i] of unit length) of very different length in z (common practice,
// worked by hand from the KKT conditions of a 2-variable QP): a: z1 ≤ θ1 and b: ε(z1 + δ z2) ≤ w_b + e_b θ2,
// with ε = 1.1e-5, δ = 0.5, e_b = √(1 − ε²(1 + δ²)), w_b = ε − e_b, so at θ2 = 1 row b reads z1 + δ z2 ≤ 1.
// Cost ½·0.1‖z‖² − (1, 0.01)·z: unconstrained minimiser (10, 0.1). At θ = (1, 1) the vertex of the two
// rows is z = (1, 0) and (10, 0.1) − (1, 0) = (9, 0.1) lies strictly inside the cone of the normals
// (1, 0) and (1, δ), so both rows are active with λ > 0. M = G H⁻¹ Gᵀ has diagonal 5 and 1.5e-9; b's
// Cholesky pivot after a is 10ε²δ² = 3.0e-10: below tol.rank·(1 + max diag) = 6e-10, above the point
// QP's own test tol.rank·(1 + M_bb) = 1e-10; on the unit-diagonal block it is δ²/(1 + δ²) = 0.2.
const eps = 1.1e-5;
const delta = 0.5;
const eb = Math.sqrt(1 - eps * eps * (1 + delta * delta));
const problem: MpqpProblem = {
  nz: 2,
  ntheta: 2,
  lawSize: 2,
  nc: 2,
  H: Float64Array.of(0.1, 0, 0, 0.1),
  F: new Float64Array(4),
  c: Float64Array.of(-1, -0.01),
  Y: new Float64Array(4),
  G: Float64Array.of(Math.SQRT1_2, 0, eps, eps * delta),
  w: Float64Array.of(0, eps - eb),
  E: Float64Array.of(Math.SQRT1_2, 0, 0, eb),
  box: { lower: Float64Array.of(0, 0.999), upper: Float64Array.of(2, 1.001) },
  labels: ['a', 'b'],
  mergedFrom: [[0], [1]],
  thetaNames: ['t1', 't2'],
  lawNames: ['z1', 'z2'],
};

describe('LICQ test on rows of very different length', () => {
  it('the unscaled pivot test rejects the pair (the case is the one the fix is for)', () => {
    const M = qpWorkspace(problem).M;
    expect(M[0]).toBeCloseTo(5, 12);
    expect(M[3] - (M[1] * M[2]) / M[0]).toBeCloseTo(10 * eps * eps * delta * delta, 15);
    expect(spdInverse(Float64Array.of(M[0], M[1], M[2], M[3]), 2, tol.rank)).toBeNull();
  });
  it('the region of {a, b} is built, holds θ = (1, 1), and its law is quadprog’s optimum there', () => {
    const theta = Float64Array.of(1, 1);
    // the point QP (Goldfarb–Idnani style) returns both rows active
    expect(solvePointQp(problem, theta).activeSet).toEqual([0, 1]);
    const res = buildRegion(problem, [0, 1], { lps: 0, reference: false });
    expect(res.ok).toBe(true);
    if (!res.ok) return;
    const R = res.region;
    expect(regionContains({ A: R.A, b: R.b }, theta, tol.inside)).toBe(true);
    for (const th of [theta, Float64Array.from(R.chebyshev.center), Float64Array.of(1.5, 1 + 2e-6)]) {
      expect(regionContains({ A: R.A, b: R.b }, th, tol.inside)).toBe(true);
      const ref = qpReference(problem, th); // quadprog: Goldfarb & Idnani's dual method
      expect(ref.feasible).toBe(true);
      for (let i = 0; i < 2; i++) {
        const z = R.law.F[i][0] * th[0] + R.law.F[i][1] * th[1] + R.law.g[i];
        expect(z).toBeCloseTo(ref.z[i], 6);
      }
    }
    // hand-worked vertex at θ = (1, 1): z = (1, 0)
    expect(R.law.g[0] + R.law.F[0][0] + R.law.F[0][1]).toBeCloseTo(1, 9);
    expect(R.law.g[1] + R.law.F[1][0] + R.law.F[1][1]).toBeCloseTo(0, 9);
  });
});
