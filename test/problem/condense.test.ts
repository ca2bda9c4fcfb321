import { describe, expect, it } from 'vitest';
import { parseProblem, type MpcModel } from '../../src/problem/index.js';
import { buildRawMpqp } from '../../src/formulation/index.js';
import { randMat, randSpd, rng } from './rng.js';

/** Simulate the plant over the horizon: the direct definition of the MPC cost and trajectories. */
function simulate(model: MpcModel, z: number[], theta: number[]) {
  const { n, m, N, Nu, A, B, C } = model;
  const uPrev = model.hasRate ? theta.slice(n, n + m) : new Array<number>(m).fill(0);
  const mv = (M: number[][], v: number[]) => M.map((row) => row.reduce((s, a, j) => s + a * v[j], 0));
  const quad = (M: number[][], v: number[]) => v.reduce((s, vi, i) => s + vi * mv(M, v)[i], 0);
  const xs = [theta.slice(0, n)];
  const us: number[][] = [];
  const dus: number[][] = [];
  let J = 0;
  for (let k = 0; k < N; k++) {
    const blk = Math.min(k, Nu - 1);
    const u = z.slice(blk * m, blk * m + m);
    const prev = k === 0 ? uPrev : us[k - 1];
    const du = u.map((v, i) => v - prev[i]);
    us.push(u);
    dus.push(du);
    J += quad(model.Q, xs[k]) + quad(model.R, u) + (model.S ? quad(model.S, du) : 0);
    const Ax = mv(A, xs[k]);
    const Bu = mv(B, u);
    xs.push(Ax.map((v, i) => v + Bu[i]));
  }
  J += quad(model.P, xs[N]);
  const ys = xs.map((x) => mv(C, x));
  return { J, xs, us, dus, ys };
}

function quadForm(H: Float64Array, a: number[], b: number[]): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) for (let j = 0; j < b.length; j++) s += a[i] * H[i * b.length + j] * b[j];
  return s;
}

function randomProblem(seed: number, opts: { rate: boolean; output: boolean; Nu: number; N: number }) {
  const r = rng(seed);
  const n = 3;
  const m = 2;
  const p = 2;
  const box = (k: number) => ({ lower: new Array(k).fill(-1), upper: new Array(k).fill(1) });
  const raw: Record<string, any> = {
    plant: { A: randMat(r, n, n, 0.9), B: randMat(r, n, m), C: randMat(r, p, n) },
    horizon: opts.N,
    controlHorizon: opts.Nu,
    weights: {
      ...(opts.output ? { output: randSpd(r, p, 0.1) } : { state: randSpd(r, n, 0.1) }),
      input: randSpd(r, m, 0.3),
      ...(opts.rate ? { inputRate: randSpd(r, m, 0) } : {}),
      terminal: randSpd(r, n, 0.5),
    },
    constraints: {
      input: { lower: [-0.7, null], upper: [0.9, 1.1] },
      state: { lower: [-2, -3, null], upper: [2.5, null, 1.5] },
      output: { lower: [-4, -1], upper: [null, 1.2] },
      ...(opts.rate ? { inputRate: { lower: [-0.3, -0.2], upper: [0.25, null] } } : {}),
    },
    parameters: box(n + (opts.rate ? m : 0)),
  };
  return { model: parseProblem(raw, 'rand.json').model, r };
}

const variants = [
  { rate: true, output: false, Nu: 3, N: 5 },
  { rate: true, output: true, Nu: 5, N: 5 },
  { rate: false, output: false, Nu: 1, N: 4 },
  { rate: false, output: true, Nu: 2, N: 6 },
];

describe('condensed mpQP', () => {
  variants.forEach((v, vi) => {
    it(`cost identity J(simulated) = ½zᵀHz + zᵀFθ + ½θᵀYθ (${JSON.stringify(v)})`, () => {
      // reference: the MPC cost summed along a simulated trajectory (definition in the problem contract)
      const { model, r } = randomProblem(100 + vi, v);
      const q = buildRawMpqp(model);
      expect(q.nz).toBe(v.Nu * model.m);
      expect(q.ntheta).toBe(model.n + (v.rate ? model.m : 0));
      for (let trial = 0; trial < 20; trial++) {
        const z = Array.from({ length: q.nz }, () => 3 * (2 * r() - 1));
        const th = Array.from({ length: q.ntheta }, () => 3 * (2 * r() - 1));
        const { J } = simulate(model, z, th);
        const Jq = 0.5 * quadForm(q.H, z, z) + quadF(q.F, z, th) + 0.5 * quadForm(q.Y, th, th);
        expect(Math.abs(Jq - J)).toBeLessThan(1e-10 * (1 + Math.abs(J)));
      }
      // H symmetric positive definite (R PD); Y symmetric
      for (let i = 0; i < q.nz; i++) for (let j = 0; j < q.nz; j++) expect(q.H[i * q.nz + j]).toBe(q.H[j * q.nz + i]);
      for (let i = 0; i < q.ntheta; i++) for (let j = 0; j < q.ntheta; j++) expect(q.Y[i * q.ntheta + j]).toBe(q.Y[j * q.ntheta + i]);
      for (let t = 0; t < 10; t++) {
        const z = Array.from({ length: q.nz }, () => 2 * r() - 1);
        expect(quadForm(q.H, z, z)).toBeGreaterThan(0);
      }
    });

    it(`constraint rows: G z − Eθ − w equals the simulated value minus its limit (${JSON.stringify(v)})`, () => {
      const { model, r } = randomProblem(200 + vi, v);
      const q = buildRawMpqp(model);
      expect(q.mergedFrom).toEqual(q.labels.map((_, i) => [i]));
      // expected row count: one row per finite bound per step (input/rate k=0…N−1, state/output k=1…N)
      const finite = (b?: { lower: (number | null)[]; upper: (number | null)[] }) =>
        b ? [...b.lower, ...b.upper].filter((x) => x !== null).length : 0;
      const cs = model.constraints;
      expect(q.nc).toBe(model.N * (finite(cs.input) + finite(cs.inputRate) + finite(cs.state) + finite(cs.output)));
      const names: Record<string, ['us' | 'dus' | 'xs' | 'ys', number]> = {};
      model.inputNames.forEach((s, i) => ((names[s] = ['us', i]), (names[`d${s}`] = ['dus', i])));
      model.stateNames.forEach((s, i) => (names[s] = ['xs', i]));
      model.outputNames.forEach((s, i) => (names[s] = ['ys', i]));
      for (let trial = 0; trial < 10; trial++) {
        const z = Array.from({ length: q.nz }, () => 2 * (2 * r() - 1));
        const th = Array.from({ length: q.ntheta }, () => 2 * (2 * r() - 1));
        const sim = simulate(model, z, th);
        q.labels.forEach((label, i) => {
          const mt = /^(\w+)\((\d+)\) (<=|>=) (-?[\d.e+-]+)$/.exec(label);
          expect(mt, label).not.toBeNull();
          const [, nm, ks, op, bs] = mt!;
          const [arr, idx] = names[nm];
          const k = Number(ks);
          if (arr === 'us' || arr === 'dus') expect(k).toBeLessThan(model.N);
          else expect(k).toBeGreaterThanOrEqual(1);
          const value = sim[arr][k][idx];
          const expected = op === '<=' ? value - Number(bs) : Number(bs) - value;
          let lhs = -q.w[i];
          for (let j = 0; j < q.nz; j++) lhs += q.G[i * q.nz + j] * z[j];
          for (let j = 0; j < q.ntheta; j++) lhs -= q.E[i * q.ntheta + j] * th[j];
          expect(Math.abs(lhs - expected)).toBeLessThan(1e-10 * (1 + Math.abs(value)));
        });
      }
    });
  });

  it('row order: input, input rate, state, output; by step then component; upper before lower', () => {
    const { model } = parseProblem(
      {
        plant: { A: [[1, 0.1], [0, 1]], B: [[0], [0.1]], C: [[1, 1]] },
        horizon: 2,
        weights: { state: [[1, 0], [0, 1]], input: [[1]] },
        constraints: {
          input: { lower: [-1], upper: [1] },
          inputRate: { lower: [-0.5], upper: [0.5] },
          state: { lower: [null, -2], upper: [3, null] },
          output: { lower: [-5] },
        },
        parameters: { lower: [-1, -1, -1], upper: [1, 1, 1] },
      },
      'order.json',
    );
    expect(buildRawMpqp(model).labels).toEqual([
      'u1(0) <= 1', 'u1(0) >= -1', 'u1(1) <= 1', 'u1(1) >= -1',
      'du1(0) <= 0.5', 'du1(0) >= -0.5', 'du1(1) <= 0.5', 'du1(1) >= -0.5',
      'x1(1) <= 3', 'x2(1) >= -2', 'x1(2) <= 3', 'x2(2) >= -2',
      'y1(1) >= -5', 'y1(2) >= -5',
    ]);
  });
});

function quadF(F: Float64Array, z: number[], th: number[]): number {
  let s = 0;
  for (let i = 0; i < z.length; i++) for (let j = 0; j < th.length; j++) s += z[i] * F[i * th.length + j] * th[j];
  return s;
}
