import { describe, it, expect } from 'vitest';
import { join } from 'node:path';
import { parseProblem } from '../../src/problem/index.js';
import { invariantSet } from '../../src/formulation/index.js';
import { evaluateTable } from '../../src/table/table.js';
import { root, solved, rng, randomInBox } from '../helpers/solved.js';

// Terminal invariant set (Gilbert & Tan 1991). References: the definition of positive invariance
// (simulation of the LQR loop), the definition of the determination index, and a scalar case by hand.
const file = join(root, 'examples', 'sway-damper-terminal-set.json');

type M = number[][];
const mv = (A: M, x: number[]) => A.map((r) => r.reduce((s, a, j) => s + a * x[j], 0));

describe('terminal invariant set', () => {
  const { loaded, table } = solved(file);
  const m = loaded.model!;
  const ts = m.terminalSet!;
  const K = m.lqrGain!;
  const Phi = m.A.map((row, i) => row.map((a, j) => a - m.B[i].reduce((s, b, l) => s + b * K[l][j], 0)));
  const limitsOk = (x: number[], slack: number) => {
    const cs = m.constraints;
    const u = mv(K, x).map((v) => -v);
    const ok = (v: number, lo: number | null, hi: number | null) => (lo === null || v >= lo - slack) && (hi === null || v <= hi + slack);
    return x.every((v, i) => !cs.state || ok(v, cs.state.lower[i], cs.state.upper[i])) && u.every((v, i) => !cs.input || ok(v, cs.input.lower[i], cs.input.upper[i]));
  };
  const inSet = (x: number[], slack: number) => ts.H.every((row, i) => row.reduce((s, a, j) => s + a * x[j], 0) <= ts.h[i] + slack);

  it('the summary records rows and determination index; the set is more than the limits (index > 0)', () => {
    expect(table.layout.features).toContain('terminalSet');
    expect(table.layout.terminalSet).toEqual({ rows: ts.h.length, index: ts.index });
    expect(ts.index).toBeGreaterThan(0);
    expect(ts.h.length).toBe(16);
  });

  it('sampled points of the set stay in it and within every limit for 50 steps of x⁺ = (A − BK)x (positive invariance)', () => {
    const rnd = rng(31);
    let inside = 0;
    for (let k = 0; k < 20000 && inside < 500; k++) {
      let x = randomInBox(m.box, rnd);
      if (!inSet(x, 0)) continue;
      inside++;
      for (let s = 0; s < 50; s++) {
        expect(limitsOk(x, 1e-9), `limits at step ${s}`).toBe(true);
        x = mv(Phi, x);
        expect(inSet(x, 1e-9), `in the set after step ${s + 1}`).toBe(true);
      }
    }
    expect(inside).toBe(500);
  });

  it('points just outside a facet violate a limit within the determination index (maximality)', () => {
    // O∞ = O_t*: every facet row is a limit at some step k ≤ t*, so leaving it breaks that limit then
    const rnd = rng(77);
    ts.H.forEach((row, i) => {
      // a point on facet i: the centre of the set pushed along the facet normal until row i is tight
      let hits = 0;
      for (let trial = 0; trial < 200 && hits < 5; trial++) {
        const x0 = randomInBox(m.box, rnd);
        if (!inSet(x0, 0)) continue;
        const a = row.reduce((s, v, j) => s + v * x0[j], 0);
        const t = ts.h[i] - a; // unit-norm row: step along it to the facet's hyperplane
        const xf = x0.map((v, j) => v + t * row[j]);
        if (!inSet(xf, 1e-9)) continue; // the hyperplane point lies outside another facet: not on this facet
        hits++;
        let x = xf.map((v, j) => v + 1e-6 * row[j]);
        let violated = false;
        for (let s = 0; s <= ts.index && !violated; s++) {
          if (!limitsOk(x, 0)) violated = true;
          x = mv(Phi, x);
        }
        expect(violated, `facet ${i}: a limit breaks within ${ts.index} steps`).toBe(true);
      }
      expect(hits, `facet ${i} reached`).toBeGreaterThan(0);
    });
  });

  it('recursive feasibility: the table law keeps sampled feasible states feasible on the nominal plant for 50 steps', () => {
    const rnd = rng(8);
    let started = 0;
    for (let k = 0; k < 2000 && started < 200; k++) {
      let x = randomInBox(table.box, rnd);
      if (evaluateTable(table, x).region < 0) continue;
      started++;
      for (let s = 0; s < 50; s++) {
        const e = evaluateTable(table, x);
        expect(e.region, `step ${s}`).toBeGreaterThanOrEqual(0);
        x = mv(m.A, x).map((v, i) => v + m.B[i][0] * e.u![0]);
      }
    }
    expect(started).toBe(200);
  });

  it('scalar plant by hand: O∞ = {|x| ≤ min(x̄, ū/|K|)}, index 0', () => {
    // x⁺ = a x + b u, |x| ≤ x̄, |u| ≤ ū, u = −Kx with |a − bK| < 1: |Φᵏx| ≤ |x|, so the limits at step 0
    // imply every later step; K from the scalar DARE b²p² + (r − a²r − qb²)p − qr = 0 (closed form)
    for (const [a, b, q, r, xbar, ubar] of [
      [1.2, 0.5, 1, 0.5, 2, 1],
      [0.9, 1, 2, 1, 1, 3],
    ]) {
      const Bq = r - a * a * r - q * b * b;
      const p = (-Bq + Math.sqrt(Bq * Bq + 4 * b * b * q * r)) / (2 * b * b);
      const Kc = (a * b * p) / (r + b * b * p);
      const model = parseProblem(
        {
          plant: { A: [[a]], B: [[b]] },
          horizon: 2,
          weights: { state: [[q]], input: [[r]] },
          constraints: { input: { lower: [-ubar], upper: [ubar] }, state: { lower: [-xbar], upper: [xbar] }, terminal: 'invariant' },
          parameters: { lower: [-xbar], upper: [xbar] },
        },
        's.json',
      ).model!;
      const set = model.terminalSet!;
      expect(set.index).toBe(0);
      expect(set.h.length).toBe(2);
      const bound = Math.min(xbar, ubar / Math.abs(Kc));
      const up = set.H.findIndex((row) => row[0] > 0);
      const lo = set.H.findIndex((row) => row[0] < 0);
      expect(set.h[up] / set.H[up][0]).toBeCloseTo(bound, 9);
      expect(set.h[lo] / -set.H[lo][0]).toBeCloseTo(bound, 9);
    }
  });

  it('an oscillating loop with a slow decay needs more steps than allowed: not determined', () => {
    const r = invariantSet([[0.999, 0.05], [-0.05, 0.999]], [[0], [0]], [[1, 0]], [[0, 0]], { output: { lower: [-1], upper: [1] } }, 20);
    expect(r.ok).toBe(false);
  });
});
