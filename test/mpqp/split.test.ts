import { describe, it, expect } from 'vitest';
import { parseProblem } from '../../src/problem/index.js';
import { formulate } from '../../src/formulation/index.js';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { createRequire } from 'node:module';
import { cutWeights, midPlaneCount, pilotSamples, splitBox } from '../../src/mpqp/split.js';
import { qpReference } from '../helpers/reference.js';

const require = createRequire(import.meta.url);
// quadprog: Goldfarb & Idnani's dual method (1983), an independent QP solver; 1-based arrays,
// min ½bᵀDb − dᵀb subject to Aᵀb ≥ b0, its multipliers in `Lagrangian`
// eslint-disable-next-line @typescript-eslint/no-explicit-any
const quadprog: any = require('quadprog');

// A saturated law with a closed form: min ½z² − θ₂ z subject to −1 ≤ z ≤ 1 gives z*(θ) = clip(θ₂, −1, 1)
// (a convex parabola in z minimised over an interval: its vertex θ₂, clipped; common practice).
// Over the box [−3, 3]² that is three regions, the slabs θ₂ < −1, |θ₂| ≤ 1, θ₂ > 1: the mid-plane
// θ₁ = 0 crosses all three, the mid-plane θ₂ = 0 only the middle one. θ₁ does not enter the problem.
const raw = {
  name: 'slab-saturation',
  mpqp: { H: [[1]], F: [[0, -1]], c: [0], G: [[1], [-1]], w: [1, 1], E: [[0, 0], [0, 0]], outputs: 1 },
  parameters: { lower: [-3, -3], upper: [3, 3] },
};
const { mpqp } = formulate(parseProblem(raw, 'slab-saturation.json'));
const box = { lower: [-3, -3], upper: [3, 3] };

describe('the pilot that chooses the cut between threads', () => {
  it('counts the regions each mid-plane crosses: 3 on θ₁ = 0, 1 on θ₂ = 0 (closed form above)', () => {
    const c0 = midPlaneCount(mpqp, box, 0, 64);
    const c1 = midPlaneCount(mpqp, box, 1, 64);
    expect(c0).toMatchObject({ axis: 0, distinct: 3, feasible: 64, samples: 64 });
    expect(c1).toMatchObject({ axis: 1, distinct: 1, feasible: 64, samples: 64 });
    // the samples really lie in the three slabs in the proportions of their widths (2 : 2 : 2 of 6),
    // judged by quadprog (Goldfarb–Idnani dual method, an independent QP solver): where |θ₂| > 1 the
    // optimum is at a bound
    let saturated = 0;
    for (let k = 1; k <= 64; k++) {
      let t = 0;
      let f = 1;
      for (let i = k; i > 0; i = Math.floor(i / 2)) t += (f /= 2) * (i % 2); // van der Corput base 2 (from memory: Halton's first coordinate)
      const theta2 = -3 + 6 * t;
      const z = qpReference(mpqp, [0, theta2]).z[0];
      expect(z).toBeCloseTo(Math.max(-1, Math.min(1, theta2)), 8);
      if (Math.abs(theta2) > 1) saturated++;
    }
    expect(saturated).toBeGreaterThan(35);
    expect(saturated).toBeLessThan(50);
  });

  it('weights the axis that crosses fewer regions higher, and the 2-way split then cuts across θ₂, not the first axis', () => {
    const w = cutWeights([midPlaneCount(mpqp, box, 0, 64), midPlaneCount(mpqp, box, 1, 64)]);
    expect(w[1]).toBe(1);
    expect(w[0]).toBeCloseTo(1 / 3, 12);
    // both sides equally wide: without the pilot's weights the first axis is cut (hand-computed halves)
    expect(splitBox(box, 0, 2, [1, 1])).toEqual({ lower: [-3, -3], upper: [0, 3] });
    expect(splitBox(box, 0, 2, w)).toEqual({ lower: [-3, -3], upper: [3, 0] });
    expect(splitBox(box, 1, 2, w)).toEqual({ lower: [-3, 0], upper: [3, 3] });
  });

  it('a plane feasible at under an eighth of its samples is weighted below every other (the work would all lie on one side)', () => {
    const w = cutWeights([
      { axis: 0, distinct: 9, feasible: 60, samples: 64 },
      { axis: 1, distinct: 1, feasible: 7, samples: 64 },
      { axis: 2, distinct: 3, feasible: 64, samples: 64 },
    ]);
    expect(w[2]).toBe(1);
    expect(w[0]).toBeCloseTo(1 / 3, 12);
    expect(w[1]).toBeLessThan(w[0]);
  });
});

describe('the pilot on a large 4-D table (boom-4d-n20, 18 931 regions)', () => {
  it('with pilotSamples(4) points per mid-plane it cuts across the axis quadprog finds the fewest distinct optimal active sets on, 1024 points per plane', () => {
    const raw = JSON.parse(readFileSync(join(import.meta.dirname, '..', 'fixtures', 'scale', 'boom-4d-n20.json'), 'utf8'));
    const { mpqp: P } = formulate(parseProblem(raw, 'boom-4d-n20.json'));
    const { nz, nc, ntheta: nt } = P;
    const whole = { lower: Array.from(P.box.lower), upper: Array.from(P.box.upper) };
    // the reference: on each axis's mid-plane, 1024 points (a Halton sequence over the other three
    // coordinates: van der Corput in bases 2, 3, 5, from memory), the QP solved by quadprog and its
    // active set read from its multipliers (> 1e-9); the number of distinct sets stands for the
    // regions the plane crosses (a region is the set of θ with one optimal active set: common practice)
    const D: number[][] = [[]];
    for (let i = 0; i < nz; i++) D.push([0, ...Array.from({ length: nz }, (_, j) => P.H[i * nz + j])]);
    const Amat: number[][] = [[]];
    for (let j = 0; j < nz; j++) Amat.push([0, ...Array.from({ length: nc }, (_, i) => -P.G[i * nz + j])]);
    const vdc = (k: number, b: number): number => {
      let f = 1;
      let r = 0;
      for (let i = k; i > 0; i = Math.floor(i / b)) r += (f /= b) * (i % b);
      return r;
    };
    const dense = whole.lower.map((_, axis) => {
      const keys = new Set<string>();
      for (let k = 1; k <= 1024; k++) {
        let d = 0;
        const th = whole.lower.map((lo, a) => (a === axis ? (lo + whole.upper[a]) / 2 : lo + (whole.upper[a] - lo) * vdc(k, [2, 3, 5][d++])));
        const dv = [0, ...Array.from({ length: nz }, (_, i) => -(P.c[i] + th.reduce((s, t, j) => s + P.F[i * nt + j] * t, 0)))];
        const b0 = [0, ...Array.from({ length: nc }, (_, i) => -(P.w[i] + th.reduce((s, t, j) => s + P.E[i * nt + j] * t, 0)))];
        const r = quadprog.solveQP(D.map((x) => x.slice()), dv, Amat.map((x) => x.slice()), b0, 0);
        if (r.message) continue; // infeasible at this θ
        const act: number[] = [];
        for (let i = 1; i <= nc; i++) if (r.Lagrangian[i] > 1e-9) act.push(i - 1);
        keys.add(act.join(','));
      }
      return keys.size;
    });
    const fewest = dense.indexOf(Math.min(...dense));
    // the dense counts tell the axes apart (measured: 180, 137, 124, 53)
    expect(Math.min(...dense.filter((_, a) => a !== fewest))).toBeGreaterThan(1.5 * dense[fewest]);
    const w = cutWeights(whole.lower.map((_, a) => midPlaneCount(P, whole, a, pilotSamples(nt))));
    expect(w[fewest]).toBe(1);
    const half = splitBox(whole, 0, 2, w);
    for (let a = 0; a < nt; a++) expect(half.upper[a]).toBe(a === fewest ? (whole.lower[a] + whole.upper[a]) / 2 : whole.upper[a]);
  }, 60_000);
});

const near = (got: { lower: number[]; upper: number[] }, want: { lower: number[]; upper: number[] }) => {
  for (const k of ['lower', 'upper'] as const) {
    expect(got[k].length).toBe(want[k].length);
    got[k].forEach((x, j) => expect(x).toBeCloseTo(want[k][j], 14));
  }
};

describe('splitBox: recursive bisection by weighted relative width (hand-computed boxes)', () => {
  const b = { lower: [0, 0, 0], upper: [4, 2, 1] };
  it('3 parts with weights favouring the last axis: 1 : 2 across z at z = 1/3, the 2 split again across z at 2/3', () => {
    const w = [0.1, 0.1, 1];
    near(splitBox(b, 0, 3, w), { lower: [0, 0, 0], upper: [4, 2, 1 / 3] });
    // the remaining [1/3, 1] has relative width 2/3 on z (weighted 2/3) against 0.1 on x and y
    near(splitBox(b, 1, 3, w), { lower: [0, 0, 1 / 3], upper: [4, 2, 2 / 3] });
    near(splitBox(b, 2, 3, w), { lower: [0, 0, 2 / 3], upper: [4, 2, 1] });
  });
  it('4 parts with equal weights: across x (lowest index on ties), then across y in each half', () => {
    const w = [1, 1, 1];
    expect(splitBox(b, 0, 4, w)).toEqual({ lower: [0, 0, 0], upper: [2, 1, 1] });
    expect(splitBox(b, 1, 4, w)).toEqual({ lower: [0, 1, 0], upper: [2, 2, 1] });
    expect(splitBox(b, 2, 4, w)).toEqual({ lower: [2, 0, 0], upper: [4, 1, 1] });
    expect(splitBox(b, 3, 4, w)).toEqual({ lower: [2, 1, 0], upper: [4, 2, 1] });
    expect(() => splitBox(b, 4, 4, w)).toThrow(RangeError);
  });
});
