/**
 * The point QP's rank decision (is the row to add in the span of the working set's rows?) and its
 * result on campaign seed 1933 (test/fixtures/accuracy/weak-actuator-state-cap.json, our own random
 * problem: an unstable 2-state plant whose second state takes the input with gain 0.015, capped at
 * every step; where all 6 caps hold G_A is triangular with diagonal 1.1e-2 … 8.1e-4, κ(G_A) ≈ 2e9).
 *
 * References, none of them the project's code path:
 * - quadprog (Goldfarb & Idnani's dual method, an independent implementation) for the optimum;
 * - javascript-lp-solver (an LP in z, phase 1) for feasibility;
 * - the distance of a vector to the span of given rows, in 50-digit arithmetic by mathjs BigNumber
 *   from the normal equations, ‖g‖² − gᵀG_Aᵀ(G_A G_Aᵀ)⁻¹G_A g (common practice: the projection
 *   onto a row space; 50 digits carry κ(G_A)² ≈ 1e19 with 30 to spare);
 * - analytic constructions: a combination of the rows is in their span (distance 0); adding δ times
 *   a unit vector orthogonal to every row puts it at distance exactly δ (Pythagoras).
 */
import { describe, expect, it } from 'vitest';
import * as math from 'mathjs';
import { join } from 'node:path';
import { buildMpqp, loadProblem, solveProblem, type MpqpProblem } from '../../src/index.js';
import { solvePointQp } from '../../src/mpqp/pointqp.js';
import { householderForm, householderReduce } from '../../src/linalg/dense.js';
import { qpReference, lpFeasibleReference } from '../helpers/reference.js';
import { rng, randomInBox } from '../helpers/solved.js';
import { bn, exactBig, exactKkt } from '../helpers/exact.js';

const root = join(import.meta.dirname, '..', '..');

/** Factor rows of `rows` (each length n) one by one as the point QP does; the distance of x to their span. */
function distanceByReflectors(rows: number[][], x: number[]): number {
  const n = x.length;
  const k = rows.length;
  const v = new Float64Array((k + 1) * n);
  const tau = new Float64Array(k + 1);
  rows.forEach((r, a) => {
    r.forEach((e, i) => (v[a * n + i] = e));
    householderForm(v, tau, n, a, householderReduce(v, tau, n, a, v, a * n));
  });
  return householderReduce(v, tau, n, k, Float64Array.from(x));
}

/** The same distance in 50 digits by mathjs BigNumber from the doubles as they are (normal equations; see the header). */
function distanceExact(rows: number[][], x: number[]): number {
  const A = bn.matrix(rows.map((r) => r.map((v) => exactBig(v))));
  const g = bn.matrix(x.map((e) => [exactBig(e)]));
  const Ag = bn.multiply(A, g) as math.Matrix;
  const y = bn.lusolve(bn.multiply(A, bn.transpose(A)) as math.Matrix, Ag) as math.Matrix;
  const gg = bn.multiply(bn.transpose(g), g) as math.Matrix;
  const proj = bn.multiply(bn.transpose(Ag), y) as math.Matrix;
  const d2 = bn.subtract(gg.get([0, 0]), proj.get([0, 0])) as math.BigNumber;
  return d2.isNegative() ? 0 : Number(bn.sqrt(d2));
}

/** Rows T·U_k of a triangular T with diagonal `diag` and off-diagonal entries up to 0.2 (as seed 1933's G_A), U orthogonal. */
function illConditioned(n: number, k: number, diag: number[], r: () => number): { rows: number[][]; U: number[][] } {
  // U: a Householder reflection I − 2wwᵀ/wᵀw of a random w, orthogonal (common practice)
  const w = Array.from({ length: n }, () => r() - 0.5);
  const ww = w.reduce((s, x) => s + x * x, 0);
  const U = w.map((wi, i) => w.map((wj, j) => (i === j ? 1 : 0) - (2 * wi * wj) / ww));
  const rows: number[][] = [];
  for (let a = 0; a < k; a++) {
    const t = Array.from({ length: k }, (_, b) => (b < a ? 0.2 * (r() - 0.5) : b === a ? diag[a] : 0));
    rows.push(Array.from({ length: n }, (_, i) => t.reduce((s, tb, b) => s + tb * U[b][i], 0)));
  }
  return { rows, U };
}

describe('rank decision of the point QP: distance to the working set’s row span (Householder QR of G_Aᵀ)', () => {
  it('matches the 50-digit distance (mathjs BigNumber) on random and ill-conditioned row sets', () => {
    const r = rng(1933);
    let worst = 0;
    let worstIll = 0;
    for (let t = 0; t < 60; t++) {
      const n = 2 + Math.floor(r() * 9);
      const k = 1 + Math.floor(r() * (n - 1));
      // every third set as ill-conditioned as seed 1933's G_A (diagonal down to 8e-4 under 0.2 off it)
      const rows =
        t % 3 === 0
          ? illConditioned(n, k, Array.from({ length: k }, (_, a) => 1.1e-2 * Math.pow(8.1e-4 / 1.1e-2, a / Math.max(1, k - 1))), r).rows
          : Array.from({ length: k }, () => Array.from({ length: n }, () => r() - 0.5));
      const x = Array.from({ length: n }, () => r() - 0.5);
      const d = distanceByReflectors(rows, x);
      const ref = distanceExact(rows, x);
      const err = Math.abs(d - ref) / Math.hypot(...x);
      if (t % 3 === 0) worstIll = Math.max(worstIll, err);
      else worst = Math.max(worst, err);
    }
    // Householder QR is backward stable (Golub & Van Loan §5.2.1): the distance is exact for rows
    // perturbed by O(u)·‖G_A‖, which moves it by up to about u·κ(G_A)·‖x‖ (≈ 1e-7 at κ ≈ 1e9); through
    // M = G_A G_Aᵀ (the q test) that bound is u·κ(G_A)², past 1. Measured 2026-12-05: 6.0e-16 on the
    // random sets, 9.4e-12 on the ill-conditioned ones (relative to ‖x‖; the rank test's margin is
    // √tol.rank = 1e-5)
    expect(worst).toBeLessThan(1e-13);
    expect(worstIll).toBeLessThan(1e-9);
  });

  it('analytic: a combination of the rows is at distance 0, adding δ·u (u ⟂ rows, unit) at distance δ — where κ(rows) ≈ 1e9', () => {
    const r = rng(59);
    const n = 6;
    for (const k of [3, 5]) {
      const { rows, U } = illConditioned(n, k, [1.1e-2, 3e-3, 1e-3, 9e-4, 8.1e-4].slice(0, k), r);
      const c = Array.from({ length: k }, () => r() - 0.5);
      const dep = Array.from({ length: n }, (_, i) => rows.reduce((s, row, a) => s + c[a] * row[i], 0));
      const norm = Math.hypot(...dep);
      // in the span: the distance is rounding, far below the tol.rank test ρ² ≤ 1e-10·‖g‖²
      expect(distanceByReflectors(rows, dep) / norm).toBeLessThan(1e-13);
      for (const delta of [1e-3, 1e-6, 1e-9]) {
        // U's row k is a unit vector orthogonal to rows 0 … k − 1 of U, hence to every row (their combinations)
        const ind = dep.map((e, i) => e + delta * norm * U[k][i]);
        const d = distanceByReflectors(rows, ind);
        expect(Math.abs(d / (delta * norm) - 1)).toBeLessThan(1e-6);
      }
      // a 7th row in 6 unknowns (k = n) is in the span whatever it is
      const full = illConditioned(n, n, [1.1e-2, 3e-3, 1e-3, 9e-4, 8.5e-4, 8.1e-4], r).rows;
      expect(distanceByReflectors(full, Array.from({ length: n }, () => r() - 0.5))).toBeLessThan(1e-14);
    }
  });
});

describe('point QP on campaign seed 1933 (weak-actuator-state-cap)', () => {
  it('agrees with quadprog and the LP on feasibility at the 150 points of the warm-start draw, u within 1e-8 relative of quadprog (one point was called infeasible)', () => {
    const file = join(root, 'test', 'fixtures', 'accuracy', 'weak-actuator-state-cap.json');
    const { table, mpqp } = solveProblem(loadProblem(file));
    // the draw of the generic warm-started point-QP test (test/mpqp/scale.test.ts) for this file
    const rnd = rng(31 + 'weak-actuator-state-cap.json'.length);
    let feasible = 0;
    let worstU = 0;
    let worstZ = 0;
    let worstExact = 0;
    for (let k = 0; k < 150; k++) {
      const th = randomInBox(mpqp.box, rnd);
      const start = table.regions[Math.floor(rnd() * table.regions.length)].activeSet;
      const ref = qpReference(mpqp, th); // quadprog: Goldfarb–Idnani, an independent implementation
      const lp = lpFeasibleReference(mpqp, th); // javascript-lp-solver: an LP in z
      expect(lp, `θ=${th}: LP and quadprog`).toBe(ref.feasible);
      for (const qp of [solvePointQp(mpqp, th, start), solvePointQp(mpqp, th), solvePointQp(mpqp, th, undefined, false)]) {
        expect(qp.feasible, `θ=${th}`).toBe(ref.feasible);
        if (!ref.feasible) continue;
        // the working set holds at quadprog's optimum: every row in it tight there (the rows are
        // unit-length [G_i, −E_i], so a slack is a distance; quadprog's z is 2e-10 relative off at
        // |z| ≈ 2.7e9, whence the 1e-6)
        for (const i of qp.activeSet) {
          let s = -mpqp.w[i];
          for (let j = 0; j < mpqp.ntheta; j++) s -= mpqp.E[i * mpqp.ntheta + j] * th[j];
          for (let j = 0; j < mpqp.nz; j++) s += mpqp.G[i * mpqp.nz + j] * ref.z[j];
          expect(Math.abs(s), `θ=${th}: row ${i} tight at quadprog's optimum`).toBeLessThan(1e-6);
        }
      }
      // z of the refined results (refine = false returns the iterate, read for its working set only):
      // against quadprog, and against the 50-digit KKT solution on the working set, relative to |z|
      if (ref.feasible)
        for (const qp of [solvePointQp(mpqp, th, start), solvePointQp(mpqp, th)]) {
          worstU = Math.max(worstU, Math.abs(qp.z[0] - ref.z[0]) / (1 + Math.abs(ref.z[0])));
          qp.z.forEach((v, i) => (worstZ = Math.max(worstZ, Math.abs(v - ref.z[i]) / (1 + Math.abs(ref.z[i])))));
          const x = exactKkt(mpqp, qp.activeSet, th);
          const size = Math.max(1, ...x.map(Math.abs));
          x.forEach((v, i) => (worstExact = Math.max(worstExact, Math.abs(qp.z[i] - v) / size)));
        }
      if (ref.feasible) feasible++;
    }
    expect(feasible).toBeGreaterThan(100);
    // measured 2026-12-05: u and z 2.6e-9 from quadprog, which is itself that far off the exact KKT
    // solution (|z| up to 2.7e9, quadprog 0.55 off there); the point QP 4.4e-16 from the exact solution
    expect(worstU).toBeLessThan(1e-8);
    expect(worstZ).toBeLessThan(1e-8);
    expect(worstExact).toBeLessThan(1e-12);
  });

  it('the point called infeasible: the all-caps vertex, u as quadprog’s', () => {
    const mpqp = buildMpqp(loadProblem(join(root, 'test', 'fixtures', 'accuracy', 'weak-actuator-state-cap.json')));
    // point 115 of the draw above, where the steps through M_AA had left u(0) at −52.5 and a satisfied
    // cap (x2(4) ≥ −3.86, the mirror of an active one) 0.05 violated
    const th = randomInBox(mpqp.box, ((): (() => number) => {
      const rnd = rng(31 + 'weak-actuator-state-cap.json'.length);
      for (let k = 0; k < 115; k++) {
        randomInBox(mpqp.box, rnd);
        rnd();
      }
      return rnd;
    })());
    const ref = qpReference(mpqp, th);
    expect(ref.feasible).toBe(true);
    expect(lpFeasibleReference(mpqp, th)).toBe(true);
    const qp = solvePointQp(mpqp, th, undefined, false);
    expect(qp.feasible).toBe(true);
    // every upper cap x2(t) ≤ 3.86, t = 1 … 6 (rows 1, 4, …, 16: the labels say so) and nothing else
    expect(qp.activeSet.map((i) => mpqp.labels[i])).toEqual(['x2(1) <= 3.86', 'x2(2) <= 3.86', 'x2(3) <= 3.86', 'x2(4) <= 3.86', 'x2(5) <= 3.86', 'x2(6) <= 3.86']);
    expect(ref.z[0]).toBeLessThan(-60);
    expect(Math.abs(qp.z[0] - ref.z[0])).toBeLessThan(1e-8 * (1 + Math.abs(ref.z[0])));
  });
});
