import { describe, expect, it } from 'vitest';
import { createRequire } from 'node:module';
import { randomLcg } from 'd3';
import { analyseCoverage, analyseSlice, feasibleAt, feasibleSlice } from '../../src/check/gaps.js';
import { makeSliceSpec } from '../../src/partition/slice.js';
import { area, convexContains } from '../../src/partition/polygon.js';
import { regionContains } from '../../src/table/table.js';
import type { MpqpProblem } from '../../src/mpqp/types.js';
import { default2d, default3d, syntheticProblem, syntheticTable, withoutRegion, dot } from './synthetic.js';

const require = createRequire(import.meta.url);
// Goldfarb–Idnani dual method (quadprog on npm), used as the outside judge of point feasibility:
// it reports "constraints are inconsistent" exactly when no z meets G z ≤ w + Eθ.
const quadprog = require('quadprog') as {
  solveQP: (D: number[][], d: number[], A: number[][], b: number[], meq?: number) => { message: string; solution: number[] };
};

function quadprogFeasible(p: MpqpProblem, theta: number[]): boolean {
  const n = p.nz;
  const D: number[][] = [[]];
  for (let i = 1; i <= n; i++) {
    D[i] = [0];
    for (let j = 1; j <= n; j++) D[i][j] = i === j ? 1 : 0;
  }
  const d = [0, ...new Array(n).fill(0)];
  // quadprog wants Aᵀ z ≥ b0 with 1-based columns: −G z ≥ −(w + Eθ)
  const A: number[][] = [[]];
  for (let i = 1; i <= n; i++) {
    A[i] = [0];
    for (let r = 0; r < p.nc; r++) A[i][r + 1] = -p.G[r * n + (i - 1)];
  }
  const b0 = [0];
  for (let r = 0; r < p.nc; r++) {
    let s = p.w[r];
    for (let k = 0; k < p.ntheta; k++) s += p.E[r * p.ntheta + k] * theta[k];
    b0.push(-s);
  }
  const res = quadprog.solveQP(D, d, A, b0, 0);
  return !/inconsistent/.test(res.message);
}

describe('point feasibility', () => {
  it('agrees with quadprog and with the closed form s ≤ 3 on 400 seeded points', () => {
    const p = syntheticProblem(default3d);
    const rng = randomLcg(11);
    let infeasibleSeen = 0;
    for (let t = 0; t < 400; t++) {
      const th = default3d.lower.map((lo, k) => lo + (default3d.upper[k] - lo) * rng());
      const s = dot(default3d.c, th);
      if (Math.abs(s - 3) < 1e-6) continue;
      const mine = feasibleAt(p, th);
      expect(mine).toBe(quadprogFeasible(p, th));
      expect(mine).toBe(s <= 3);
      if (!mine) infeasibleSeen++;
    }
    expect(infeasibleSeen).toBeGreaterThan(5);
  });
});

describe('feasible slice polygon (support LPs)', () => {
  it('is the box cut by x1 + x2 ≤ 3 in 2-D: area 16 − 1/2 (triangle with legs 1, closed form)', () => {
    const p = syntheticProblem(default2d);
    const spec = makeSliceSpec(default2d, [0, 1]);
    const K = feasibleSlice(p, spec);
    expect(area(K)).toBeCloseTo(16 - 0.5, 9);
    expect(K.length).toBe(5);
    expect(convexContains(K, [1.4, 1.4], 1e-9)).toBe(true);
    expect(convexContains(K, [1.6, 1.6], 1e-9)).toBe(false);
  });
  it('in a 3-D slice at x3 = 1 the cut is x1 + x2 ≤ 2.5 (area 16 − 1.5²/2)', () => {
    const p = syntheticProblem(default3d);
    const spec = makeSliceSpec(default3d, [0, 1], new Map([[2, 1]]));
    expect(area(feasibleSlice(p, spec))).toBeCloseTo(16 - 1.125, 9);
  });
  it('is empty when the fixed value makes the whole slice infeasible', () => {
    const o = { ...default3d, lower: [1.8, 1.8, -10], upper: [2, 2, 10] };
    const p = syntheticProblem(o);
    const spec = makeSliceSpec(o, [0, 1], new Map([[2, 8]]));
    expect(feasibleSlice(p, spec)).toEqual([]);
  });
});

describe('coverage of a complete table', () => {
  const table = syntheticTable(default2d);
  const problem = syntheticProblem(default2d);
  it('exact 2-D areas: covered = feasible area 15.5, infeasible = 0.5, no holes (closed form)', () => {
    const rep = analyseCoverage(table, problem, { samples: 4000, seed: 3 });
    expect(rep.exact2d).not.toBeNull();
    expect(rep.exact2d!.areas.covered).toBeCloseTo(15.5, 9);
    expect(rep.exact2d!.areas.infeasible).toBeCloseTo(0.5, 9);
    expect(rep.exact2d!.areas.holes).toBeLessThan(1e-9);
    expect(rep.hasHoles).toBe(false);
    expect(rep.monteCarlo.holes.count).toBe(0);
    // Monte Carlo infeasible fraction 0.5/16 within 4 binomial standard errors (common practice)
    const mc = rep.monteCarlo.infeasible;
    const se = Math.sqrt((0.5 / 16) * (1 - 0.5 / 16) / rep.monteCarlo.samples);
    expect(Math.abs(mc.fraction - 0.5 / 16)).toBeLessThan(4 * se);
    expect(rep.facetProbes.facets).toBeGreaterThan(10);
    expect(rep.facetProbes.holes).toBe(0);
  });
});

describe('a deliberately deleted region', () => {
  for (const [label, o] of [
    ['2-D', default2d],
    ['3-D', default3d],
  ] as const) {
    it(`${label}: gaps finds hole witnesses inside the deleted region`, () => {
      const full = syntheticTable(o);
      // delete a region of the unconstrained band (feasible everywhere)
      const idx = full.regions.findIndex((r) => r.activeSet.length === 0 && r.chebyshev.radius > 0.2);
      const { table, removed } = withoutRegion(full, idx);
      const rep = analyseCoverage(table, syntheticProblem(o), { samples: 6000, seed: 5 });
      expect(rep.hasHoles).toBe(true);
      expect(rep.witnesses.length).toBeGreaterThan(0);
      for (const w of rep.witnesses) expect(regionContains(removed, w.theta, 1e-6)).toBe(true);
      expect(rep.witnesses.some((w) => w.source === 'facet-probe')).toBe(true);
      // Monte Carlo hole count equals the number of samples that fall in the removed region
      // (the region itself is the independent judge here)
      const rng = randomLcg(5);
      let inRemoved = 0;
      for (let t = 0; t < 6000; t++) {
        const th = o.lower.map((lo, k) => lo + (o.upper[k] - lo) * rng());
        if (regionContains(removed, th)) inRemoved++;
      }
      expect(rep.monteCarlo.holes.count).toBe(inRemoved);
      if (o.c.length === 2) {
        expect(rep.exact2d!.holeComponents).toBe(1);
        const sl = analyseSlice(full, syntheticProblem(o), makeSliceSpec(o, [0, 1]));
        const removedArea = sl.polygons.find((p) => p.id === removed.id)!.area;
        expect(rep.exact2d!.areas.holes).toBeCloseTo(removedArea, 9);
      }
    });
  }
});

describe('bounded coverage run', () => {
  it('a time limit stops the Monte Carlo early and marks the result incomplete, with the error for the N actually drawn', async () => {
    const { formatReport } = await import('../../src/cli/gaps.js');
    const table = syntheticTable(default2d);
    const rep = analyseCoverage(table, syntheticProblem(default2d), { samples: 1_000_000, seed: 2, timeLimit: 0, noProbes: true });
    expect(rep.monteCarlo.complete).toBe(false);
    // the clock is read every 256 samples: the run stops at the first check after the limit
    const N = rep.monteCarlo.samples;
    expect(N % 256).toBe(0);
    expect(N).toBeLessThan(1_000_000);
    const p = rep.monteCarlo.infeasible.fraction;
    expect(rep.monteCarlo.infeasible.stderr).toBeCloseTo(Math.sqrt((p * (1 - p)) / N), 12);
    expect(formatReport(rep)).toMatch(/stopped early by the time limit; 1000000 requested/);
    const inc = { ...table, stats: { ...table.stats, complete: false, stopReason: 'max-regions' as const } };
    expect(formatReport(analyseCoverage(inc, syntheticProblem(default2d), { samples: 500 }))).toMatch(/INCOMPLETE TABLE/);
  });
});
