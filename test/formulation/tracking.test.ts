import { describe, it, expect } from 'vitest';
import { join } from 'node:path';
import * as math from 'mathjs';
import { parseProblem } from '../../src/problem/index.js';
import { steadyStateTarget, formulate } from '../../src/formulation/index.js';
import { evaluateTable } from '../../src/table/table.js';
import { root, solved } from '../helpers/solved.js';

const scalar = (a: number, b: number, c: number, bd: number, cd: number) =>
  parseProblem(
    {
      plant: { A: [[a]], B: [[b]], C: [[c]], Bd: [[bd]], Cd: [[cd]] },
      horizon: 3,
      weights: { state: [[1]], input: [[1]] },
      tracking: {},
      parameters: { lower: [-1, -1, -1], upper: [1, 1, 1] },
    },
    'scalar.json',
  ).model!;

describe('steady-state target', () => {
  it('scalar plant: closed form x_s = (r − cd·d)/c, u_s = ((1 − a)x_s − bd·d)/b', () => {
    // from (a − 1)x_s + b u_s = −bd d and c x_s + cd d = r: a square system, so the minimum-norm
    // solution is the unique one (hand derivation)
    for (const [a, b, c, bd, cd, r, d] of [
      [0.9, 0.5, 2, 0.3, 0.1, 1.2, -0.4],
      [1, 0.2, 1, 1, 0, -0.7, 0.25],
      [1.1, -0.3, 0.5, 0, 2, 0.3, 0.8],
    ]) {
      const { xs, us } = steadyStateTarget(scalar(a, b, c, bd, cd), [r], [d]);
      const xe = (r - cd * d) / c;
      expect(xs[0]).toBeCloseTo(xe, 12);
      expect(us[0]).toBeCloseTo(((1 - a) * xe - bd * d) / b, 12);
    }
  });

  it('more inputs than tracked outputs: solves the target system and has minimum norm (lies in the row space)', () => {
    // minimum-norm property: the solution s of M s = rhs with least ‖s‖ is orthogonal to null(M),
    // i.e. (I − M⁺M)s = 0 (handbook linear algebra; M⁺ by mathjs pinv)
    const model = parseProblem(
      {
        plant: { A: [[0.8, 0.1], [0, 0.95]], B: [[0.2, 0.1], [0.05, 0.3]], C: [[1, 0]], Bd: [[0.1], [0.05]] },
        horizon: 2,
        weights: { state: [[1, 0], [0, 1]], input: [[1, 0], [0, 1]] },
        tracking: { outputs: [0] },
        parameters: { lower: [-1, -1, -1, -1], upper: [1, 1, 1, 1] },
      },
      't.json',
    ).model!;
    const r = [0.6];
    const d = [-0.3];
    const { xs, us } = steadyStateTarget(model, r, d);
    const s = [...xs, ...us];
    const M = [
      [0.8 - 1, 0.1, 0.2, 0.1],
      [0, 0.95 - 1, 0.05, 0.3],
      [1, 0, 0, 0],
    ];
    const rhs = [-0.1 * d[0], -0.05 * d[0], r[0]];
    M.forEach((row, i) => expect(row.reduce((acc, v, j) => acc + v * s[j], 0)).toBeCloseTo(rhs[i], 12));
    const Mp = math.pinv(M) as number[][];
    const proj = math.subtract(math.identity(4), math.multiply(Mp, M)) as math.Matrix;
    const off = math.multiply(proj, s) as math.Matrix;
    (off.toArray() as number[]).forEach((v) => expect(Math.abs(v)).toBeLessThan(1e-12));
  });
});

describe('zero-order hold with a disturbance input', () => {
  it('A, B, Bd are the blocks of exp([[A, B, Bd], [0, 0, 0]]·T) (mathjs expm)', () => {
    const A = [[-0.3, 1], [0, -0.8]];
    const B = [[0], [0.5]];
    const Bd = [[0.2], [0.1]];
    const T = 0.4;
    const model = parseProblem(
      { plant: { A, B, Bd, timeDomain: 'continuous', sampleTime: T }, horizon: 2, weights: { state: [[1, 0], [0, 1]], input: [[1]] }, parameters: { lower: [-1, -1, -1], upper: [1, 1, 1] } },
      'z.json',
    ).model!;
    const Mc = [
      [-0.3 * T, 1 * T, 0, 0.2 * T],
      [0, -0.8 * T, 0.5 * T, 0.1 * T],
      [0, 0, 0, 0],
      [0, 0, 0, 0],
    ];
    const E = (math.expm(math.matrix(Mc)) as math.Matrix).toArray() as number[][];
    for (let i = 0; i < 2; i++) {
      for (let j = 0; j < 2; j++) expect(model.A[i][j]).toBeCloseTo(E[i][j], 14);
      expect(model.B[i][0]).toBeCloseTo(E[i][2], 14);
      expect(model.Bd![i][0]).toBeCloseTo(E[i][3], 14);
    }
  });
});

describe('offset-free tracking on the nominal plant (Muske & Rawlings 1993; Pannocchia & Rawlings 2003)', () => {
  // closed loop with the table law: θ = [x; u_prev; r; d], x⁺ = A x + B u + Bd d (the plant as
  // discretised; the ZOH itself is checked above against mathjs). With constant r and d inside the
  // limits, y → r: zero steady-state offset (common practice).
  const cases: { file: string; x0: number[]; r: number[]; d: number[]; steps: number }[] = [
    { file: 'examples/hoist-setpoint.json', x0: [-1.5, 0], r: [1.2], d: [], steps: 300 },
    { file: 'examples/greenhouse-offset-free.json', x0: [-2, -1], r: [1.5], d: [0.6], steps: 600 },
    { file: 'examples/greenhouse-offset-free.json', x0: [2, 1], r: [-1], d: [-0.8], steps: 600 },
    { file: 'test/fixtures/problems/tracking-rate.json', x0: [1, -1], r: [0.8], d: [], steps: 300 },
  ];
  for (const c of cases) {
    it(`${c.file}: r = ${c.r}, d = ${c.d.length ? c.d : '—'}`, () => {
      const { table, loaded } = solved(join(root, c.file));
      const m = loaded.model!;
      let x = c.x0.slice();
      let up = new Array<number>(m.m).fill(0);
      let y: number[] = [];
      for (let k = 0; k < c.steps; k++) {
        const th = [...x, ...(m.hasRate ? up : []), ...c.r, ...c.d];
        const e = evaluateTable(table, th);
        expect(e.region, `step ${k}: θ must stay in a region`).toBeGreaterThanOrEqual(0);
        const u = e.u!;
        x = m.A.map((row, i) => row.reduce((s, a, j) => s + a * x[j], 0) + m.B[i].reduce((s, b, j) => s + b * u[j], 0) + (m.Bd ? m.Bd[i].reduce((s, b, j) => s + b * c.d[j], 0) : 0));
        up = u;
        y = m.C.map((row, i) => row.reduce((s, a, j) => s + a * x[j], 0) + (m.Cd ? m.Cd[i].reduce((s, b, j) => s + b * c.d[j], 0) : 0));
      }
      m.tracking!.outputs.forEach((o, i) => expect(Math.abs(y[o] - c.r[i]), `offset of output ${o}`).toBeLessThan(1e-6));
    });
  }
});

describe('layout of a tracking + disturbance table', () => {
  it('θ blocks state, reference, disturbance in contract order, with names (inputPrev: tracking-rate fixture)', () => {
    const { table } = solved(join(root, 'examples/greenhouse-offset-free.json'));
    const L = table.layout;
    expect(L.formulation).toBe('tracking');
    expect(L.features).toEqual(['disturbance']);
    expect(L.theta.map((b) => [b.kind, b.offset, b.size, b.names])).toEqual([
      ['state', 0, 2, ['air', 'soil']],
      ['reference', 2, 1, ['air_temp_ref']],
      ['disturbance', 3, 1, ['load']],
    ]);
    expect(table.thetaNames).toEqual(['air', 'soil', 'air_temp_ref', 'load']);
    expect(L.lawSize).toBe(1);
    expect(L.lawNames).toEqual(['heat']);
    expect(L.z).toEqual([{ kind: 'moves', offset: 0, size: 5, names: ['heat(0)', 'heat(1)', 'heat(2)', 'heat(3)', 'heat(4)'], refersTo: [0, 1, 2, 3, 4] }]);
    expect(formulate(solved(join(root, 'examples/greenhouse-offset-free.json')).loaded).layout).toEqual(L);
    const R = solved(join(root, 'test/fixtures/problems/tracking-rate.json')).table.layout;
    expect(R.theta.map((b) => [b.kind, b.offset, b.size, b.names])).toEqual([
      ['state', 0, 2, ['x1', 'x2']],
      ['inputPrev', 2, 1, ['u1_prev']],
      ['reference', 3, 1, ['y1_ref']],
    ]);
    expect(R.features).toEqual(['inputRate']);
  });
});
