import { describe, it, expect } from 'vitest';
import { parseProblem } from '../../src/problem/index.js';
import { formulate } from '../../src/formulation/index.js';
import { cutWeights, midPlaneCount, splitBox } from '../../src/mpqp/split.js';
import { qpReference } from '../helpers/reference.js';

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
