/**
 * The closed-loop engine of `tessera simulate` (src/check/simulate.ts).
 * References: quadprog (Goldfarb–Idnani dual method, through test/helpers/reference.ts qpReference,
 * not the project's own wrapper) drives an independent online-MPC loop written here; mathjs gives the
 * LQR gain by the Riccati difference equation iterated to convergence (handbook formula, common
 * practice: with the DARE solution as terminal weight the unconstrained MPC law is the LQR law).
 */
import { describe, expect, it } from 'vitest';
import { join } from 'node:path';
import * as math from 'mathjs';
import { root, solved } from '../helpers/solved.js';
import { qpReference } from '../helpers/reference.js';
import { limitsOf, plantOf, sampleCoveredStarts, simulateFromTheta, simulateRun, simulationCsv, summarise, type SimulationSetup } from '../../src/check/simulate.js';
import type { Solved } from '../helpers/solved.js';

function setupOf(s: Solved, steps: number, online = true): SimulationSetup {
  const m = s.loaded.model;
  return {
    table: s.table,
    nominal: plantOf(m),
    limits: m.constraints,
    names: { states: m.stateNames, inputs: m.inputNames, outputs: m.outputNames },
    online: online
      ? (th) => {
          const r = qpReference(s.mpqp, th);
          return r.feasible ? r.z.slice(0, m.m) : null;
        }
      : undefined,
    steps,
  };
}

/** The online MPC loop, independent of the table: u(k) from quadprog at θ(k) = [x(k); u(k−1)]. */
function onlineLoop(s: Solved, x0: number[], steps: number): { x: number[][]; u: number[][] } {
  const m = s.loaded.model;
  let x = x0.slice();
  let up = new Array<number>(m.m).fill(0);
  const xs: number[][] = [];
  const us: number[][] = [];
  for (let k = 0; k < steps; k++) {
    const th = m.hasRate ? [...x, ...up] : x;
    const r = qpReference(s.mpqp, th);
    expect(r.feasible).toBe(true);
    const u = r.z.slice(0, m.m);
    xs.push(x);
    us.push(u);
    x = m.A.map((row, i) => row.reduce((a, v, j) => a + v * x[j], 0) + m.B[i].reduce((a, v, j) => a + v * u[j], 0));
    up = u;
  }
  return { x: xs, u: us };
}

const files = [join(root, 'examples', 'positioning-axis.yaml'), join(root, 'test', 'fixtures', 'problems', 'rate-limited.json'), join(root, 'examples', 'valve-actuator.json')];

describe('closed loop of the table vs the online QP (quadprog) at every step', { timeout: 60000 }, () => {
  for (const f of files) {
    it(`${f.split('/').pop()}: same inputs and states as the online MPC loop from seeded starts`, () => {
      const s = solved(f);
      const setup = setupOf(s, 40);
      const starts = sampleCoveredStarts(s.table, 5, 11, [], []);
      expect(starts.length).toBe(5);
      for (const [i, st] of starts.entries()) {
        const run = simulateRun(setup, i, st.x);
        expect(run.noRegionSteps).toBe(0);
        expect(run.violations).toEqual([]);
        const ref = onlineLoop(s, st.x, 40);
        run.records.forEach((rec, k) => {
          rec.u.forEach((v, j) => expect(Math.abs(v - ref.u[k][j])).toBeLessThan(1e-6));
          rec.x.forEach((v, j) => expect(Math.abs(v - ref.x[k][j])).toBeLessThan(1e-6));
          // the engine's own online column is the same quadprog solution
          rec.uOnline!.forEach((v, j) => expect(Math.abs(v - ref.u[k][j])).toBeLessThan(1e-6));
        });
        expect(run.maxDu).toBeLessThan(1e-6);
      }
    });
  }
});

describe('a regulator converges to the origin on the LQR law', () => {
  it('positioning axis: x → 0 and the last inputs are −K x with K from the Riccati recursion (mathjs)', () => {
    const s = solved(files[0]);
    const m = s.loaded.model;
    const A = math.matrix(m.A);
    const B = math.matrix(m.B);
    const Q = math.matrix(m.Q);
    const R = math.matrix(m.R);
    let P = Q;
    for (let i = 0; i < 3000; i++) {
      const BtPA = math.multiply(math.multiply(math.transpose(B), P), A);
      const G = math.add(R, math.multiply(math.multiply(math.transpose(B), P), B)) as math.Matrix;
      P = math.subtract(math.add(Q, math.multiply(math.multiply(math.transpose(A), P), A)), math.multiply(math.transpose(BtPA), math.multiply(math.inv(G), BtPA))) as math.Matrix;
    }
    const K = math.multiply(math.inv(math.add(R, math.multiply(math.multiply(math.transpose(B), P), B)) as math.Matrix), math.multiply(math.multiply(math.transpose(B), P), A)).toArray() as number[][];
    const run = simulateRun(setupOf(s, 300, false), 0, [2.4, -0.5]);
    expect(run.noRegionSteps).toBe(0);
    expect(Math.max(...run.final.x.map(Math.abs))).toBeLessThan(1e-6);
    expect(run.settlingStep).not.toBeNull();
    for (const rec of run.records.slice(-50)) {
      const lqr = -K[0].reduce((a, k, j) => a + k * rec.x[j], 0);
      expect(Math.abs(rec.u[0] - lqr)).toBeLessThan(1e-9 * (1 + Math.abs(lqr)) + 1e-12);
    }
    // the saturated start: the first input sits on the limit |force| ≤ 1.5 (the LQR law would exceed it)
    expect(Math.abs(run.records[0].u[0])).toBeCloseTo(1.5, 9);
    expect(Math.abs(K[0][0] * 2.4 + K[0][1] * -0.5)).toBeGreaterThan(1.5);
  });
});

describe('limits, held inputs and the summary', () => {
  it('a table whose laws were shifted breaks the input limit, and the summary counts it', () => {
    const s = solved(files[0]);
    const bad = { ...s.table, regions: s.table.regions.map((r) => ({ ...r, law: { F: r.law.F, g: r.law.g.map((g) => g + 0.4) } })) };
    const setup = { ...setupOf(s, 30), table: bad };
    const run = simulateRun(setup, 0, [-2.5, 0]);
    const sum = summarise(setup, [run]);
    expect(sum.violations).toBeGreaterThan(0);
    expect(sum.violationsByLimit.map((v) => v.limit)).toContain('force <= 1.5');
    // the shifted law differs from the online QP by the shift (on unsaturated steps)
    expect(sum.maxDu).toBeCloseTo(0.4, 9);
  });
  it('a start in no region holds the previous input (or stops) and counts the step', () => {
    const s = solved(files[0]);
    // speed 0.8 at the limit 0.6 is infeasible: no region
    const hold = simulateRun({ ...setupOf(s, 5), outside: 'hold' }, 0, [0, 0.79]);
    expect(hold.records[0].region).toBe(-1);
    expect(hold.records[0].u).toEqual([0]);
    expect(hold.noRegionSteps).toBeGreaterThan(0);
    const stop = simulateFromTheta({ ...setupOf(s, 5), outside: 'stop' }, 0, [0, 0.79]);
    expect(stop.ended).toBe('outside');
    expect(stop.records.length).toBe(1);
  });
  it('noise is seeded: the same seed gives the same CSV, another seed another one', () => {
    const s = solved(files[0]);
    const base = setupOf(s, 20, false);
    const csv = (seed: number) => simulationCsv(base, [simulateRun({ ...base, noise: { std: [0.01, 0.01], seed } }, 0, [1, 0])]);
    expect(csv(3)).toBe(csv(3));
    expect(csv(3)).not.toBe(csv(4));
    expect(csv(3)).not.toBe(simulationCsv(base, [simulateRun(base, 0, [1, 0])]));
  });
});

describe('tracking and disturbance (layout blocks r and d)', () => {
  const hoist = join(root, 'examples', 'hoist-setpoint.json');
  const greenhouse = join(root, 'examples', 'greenhouse-offset-free.json');
  const setupWith = (s: Solved, steps: number, r: number[], d: number[]): SimulationSetup => ({
    ...setupOf(s, steps),
    reference: { steps: [0], values: [r] },
    disturbance: d.length ? { steps: [0], values: [d] } : undefined,
  });

  it('hoist: constant reference, zero steady-state offset; every input = quadprog at θ = [x; r] (common practice)', () => {
    const s = solved(hoist);
    const run = simulateRun(setupWith(s, 200, [1.2], []), 0, [0, 0]);
    expect(run.noRegionSteps).toBe(0);
    expect(run.violations).toEqual([]);
    for (const rec of run.records) {
      expect(rec.theta).toEqual([...rec.x, 1.2]);
      expect(Math.abs(rec.u[0] - qpReference(s.mpqp, rec.theta).z[0])).toBeLessThan(1e-7);
    }
    // y = C x = height → r, and x⁺ = A x + B u recomputed here
    expect(Math.abs(run.final.y[0] - 1.2)).toBeLessThan(1e-6);
    expect(Math.abs(run.offset[0])).toBeLessThan(1e-6);
    const { A, B } = s.loaded.model!;
    const last = run.records[run.records.length - 1];
    run.final.x.forEach((v, i) => expect(v).toBeCloseTo(A[i][0] * last.x[0] + A[i][1] * last.x[1] + B[i][0] * last.u[0], 12));
  });

  it('greenhouse: constant disturbance enters the plant by Bd, and the output still reaches r (offset-free; Pannocchia & Rawlings 2003)', () => {
    const s = solved(greenhouse);
    const m = s.loaded.model!;
    const run = simulateRun(setupWith(s, 300, [1], [0.5]), 0, [0, 0]);
    expect(run.noRegionSteps).toBe(0);
    expect(Math.abs(run.final.y[0] - 1)).toBeLessThan(1e-6);
    // the loop really carried d: x⁺ = A x + B u + Bd d at the first step
    const r0 = run.records[0];
    const x1 = m.A.map((row, i) => row[0] * r0.x[0] + row[1] * r0.x[1] + m.B[i][0] * r0.u[0] + m.Bd![i][0] * 0.5);
    run.records[1].x.forEach((v, i) => expect(v).toBeCloseTo(x1[i], 12));
    expect(r0.theta).toEqual([0, 0, 1, 0.5]);
    for (const rec of run.records) expect(Math.abs(rec.u[0] - qpReference(s.mpqp, rec.theta).z[0])).toBeLessThan(1e-7);
  });

  it('a scheduled reference switches at its step', () => {
    const s = solved(hoist);
    const setup = { ...setupWith(s, 60, [0], []), reference: { steps: [0, 30], values: [[0.5], [-0.5]] } };
    const run = simulateRun(setup, 0, [0, 0]);
    expect(run.records[29].r).toEqual([0.5]);
    expect(run.records[30].r).toEqual([-0.5]);
    expect(Math.abs(run.records[29].y[0] - 0.5)).toBeLessThan(0.02);
  });
});

describe('soft limits', () => {
  it('motor: a soft speed limit may be exceeded; it is counted apart and is not a violation', () => {
    const s = solved(join(root, 'examples', 'motor-soft-speed.json'));
    const m = s.loaded.model!;
    const { hard, soft } = limitsOf(m);
    expect(hard.state).toBeUndefined();
    expect(soft.state).toBe(m.constraints.state);
    const setup = { ...setupOf(s, 40), limits: hard, softLimits: soft };
    // a start at speed 1.5, above the soft limit 1: a hard limit would make x(1) infeasible there
    const runs = [simulateRun(setup, 0, [1.5, 0]), ...sampleCoveredStarts(s.table, 4, 2, [], []).map((st, i) => simulateRun(setup, i + 1, st.x))];
    const sum = summarise(setup, runs);
    expect(sum.violations).toBe(0);
    // the hard formulation would forbid it; the soft one pays for it: some start exceeds the limit
    expect(sum.softViolations).toBeGreaterThan(0);
    expect(sum.softMaxExcess).toBeGreaterThan(0);
  });
});
