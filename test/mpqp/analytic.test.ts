import { describe, it, expect } from 'vitest';
import { join } from 'node:path';
import { root, solved, exampleFiles } from '../helpers/solved.js';
import { evaluateTable } from '../../src/table/table.js';
import { parseProblem } from '../../src/problem/index.js';
import { buildMpqp } from '../../src/formulation/index.js';
import { solvePartition } from '../../src/mpqp/solve.js';

describe('scalar plant, |u| ≤ ū, N = 1: three regions (analytic solution worked below)', () => {
  // x⁺ = a x + b u, J = q x² + r u² + p (a x + b u)² with p = q ("stage" terminal).
  // dJ/du = 2 r u + 2 p b (a x + b u) = 0  ⇒  u = −K x with K = p a b / (r + p b²).
  // The QP is a convex parabola in u, so the constrained optimum is the clip of −K x to [−ū, ū]:
  // three regions, breakpoints at |x| = ū / |K|, law −K x between, ∓ū outside.
  const file = join(root, 'test', 'fixtures', 'problems', 'scalar-saturated.json');
  it('regions, breakpoints and laws match the closed form', () => {
    const { table, loaded } = solved(file);
    const m = loaded.model;
    const [a, b, q, r] = [m.A[0][0], m.B[0][0], m.Q[0][0], m.R[0][0]];
    const p = m.P[0][0];
    expect(p).toBe(q);
    const ubar = m.constraints.input!.upper[0]!;
    const K = (p * a * b) / (r + p * b * b);
    const xb = ubar / Math.abs(K);
    expect(table.regions.length).toBe(3);
    // every region is an interval; collect its end points
    const intervals = table.regions
      .map((R) => {
        let lo = -Infinity;
        let hi = Infinity;
        R.A.forEach((row, i) => (row[0] > 0 ? (hi = Math.min(hi, R.b[i] / row[0])) : (lo = Math.max(lo, R.b[i] / row[0]))));
        return { lo, hi, F: R.law.F[0][0], g: R.law.g[0] };
      })
      .sort((s, t) => s.lo - t.lo);
    expect(intervals[0].lo).toBeCloseTo(-3, 12);
    expect(intervals[0].hi).toBeCloseTo(-xb, 10);
    expect(intervals[1].lo).toBeCloseTo(-xb, 10);
    expect(intervals[1].hi).toBeCloseTo(xb, 10);
    expect(intervals[2].lo).toBeCloseTo(xb, 10);
    expect(intervals[2].hi).toBeCloseTo(3, 12);
    // saturated at +ū for x < −x_b (K > 0 here), linear in the middle, −ū beyond x_b
    expect(intervals[0].F).toBeCloseTo(0, 12);
    expect(intervals[0].g).toBeCloseTo(Math.sign(K) * ubar, 12);
    expect(intervals[1].F).toBeCloseTo(-K, 12);
    expect(intervals[1].g).toBeCloseTo(0, 12);
    expect(intervals[2].g).toBeCloseTo(-Math.sign(K) * ubar, 12);
    expect(evaluateTable(table, [0.5 * xb]).u![0]).toBeCloseTo(-K * 0.5 * xb, 12);
  });

  it('with the Riccati terminal weight the middle gain is the LQR gain at any horizon', () => {
    // common practice: with P from the DARE, the unconstrained finite-horizon law equals LQR
    const raw = {
      plant: { A: [[1.1]], B: [[0.5]] },
      horizon: 4,
      weights: { state: [[2]], input: [[0.3]], terminal: 'riccati' },
      constraints: { input: { lower: [-1], upper: [1] } },
      parameters: { lower: [-10], upper: [10] },
    };
    const loaded = parseProblem(raw, 'inline-scalar.json');
    const part = solvePartition(buildMpqp(loaded));
    // scalar DARE closed form (from the Riccati equation p = q + a²p − a²b²p²/(r + b²p)):
    // b² p² + (r − a² r − q b²) p − q r = 0, positive root
    const [a, b, q, r] = [1.1, 0.5, 2, 0.3];
    const B = r - a * a * r - q * b * b;
    const p = (-B + Math.sqrt(B * B + 4 * b * b * q * r)) / (2 * b * b);
    const K = (a * b * p) / (r + b * b * p);
    const origin = part.regions.find((R) => R.activeSet.length === 0)!;
    expect(origin).toBeDefined();
    expect(origin.law.F[0][0]).toBeCloseTo(-K, 10);
    expect(loaded.model.lqrGain![0][0]).toBeCloseTo(K, 10);
  });
});

describe('Riccati terminal: the region holding the origin has u(0) = −K_LQR x (common practice)', () => {
  // the equality holds when the MPC's unconstrained law is the LQR law: Riccati terminal, no rate
  // weight (θ has no u_prev) and Nu = N
  const qualifies = (file: string): boolean => {
    const { loaded } = solved(file);
    // an mpqp file has no model; soft limits with a linear weight keep ε ≥ 0 active at rest
    if (!loaded.model || loaded.model.soft.state || loaded.model.soft.output) return false;
    const t = (loaded.raw as { weights: { terminal?: unknown } }).weights.terminal;
    return (t === undefined || t === 'riccati') && !loaded.model.hasRate && loaded.model.Nu === loaded.model.N;
  };
  const files = exampleFiles.filter(qualifies);
  it('applies to at least two shipped examples', () => expect(files.length).toBeGreaterThanOrEqual(2));
  for (const file of files) {
    it(file.split('/').pop()!, () => {
      const { table, loaded } = solved(file);
      const K = loaded.model.lqrGain!;
      const at = evaluateTable(table, new Array(table.dims.ntheta).fill(0));
      expect(at.region).toBeGreaterThanOrEqual(0);
      const R = table.regions[at.region];
      expect(R.activeSet).toEqual([]);
      for (let i = 0; i < loaded.model.m; i++) {
        for (let j = 0; j < loaded.model.n; j++) expect(R.law.F[i][j]).toBeCloseTo(-K[i][j], 8);
        expect(R.law.g[i]).toBeCloseTo(0, 10);
      }
    });
  }
});
