import { describe, it, expect } from 'vitest';
import { join } from 'node:path';
import { createRequire } from 'node:module';
import { parseProblem } from '../../src/problem/index.js';
import { formulate } from '../../src/formulation/index.js';
import { solvePartition } from '../../src/mpqp/solve.js';
import { makeTable } from '../../src/table/build.js';
import { evaluateTable } from '../../src/table/table.js';
import { contractQp, qpAt, type ContractQp } from '../helpers/contract-qp.js';
import { root, solved, rng, randomInBox } from '../helpers/solved.js';
import type { TableFile } from '../../src/table/format.js';

const require = createRequire(import.meta.url);
// eslint-disable-next-line @typescript-eslint/no-explicit-any
const quadprog: any = require('quadprog');

const softFile = join(root, 'examples', 'motor-soft-speed.json');

function tableOf(raw: unknown, name: string): TableFile {
  const loaded = parseProblem(raw, name);
  const f = formulate(loaded);
  return makeTable(loaded, f, solvePartition(f.mpqp));
}

/** Multipliers of the hard problem at θ by quadprog (its `Lagrangian`, one per row of A z ≤ b), null when infeasible. */
function hardMultipliers(cq: ContractQp, th: number[], Hc: { H?: number[][] }): number[] | null {
  const { H, g, A, b } = qpAt(cq, th, Hc);
  const D = [[], ...H.map((r) => [0, ...r])];
  const d = [0, ...g.map((v) => -v)];
  const Amat: number[][] = [[]];
  for (let j = 0; j < cq.nz; j++) Amat.push([0, ...A.map((row) => -row[j])]);
  const res = quadprog.solveQP(D, d, Amat, [0, ...b.map((v) => -v)], 0);
  if (res.message && res.message.length > 0) return null;
  return res.Lagrangian.slice(1);
}

describe('soft limits: exact penalty (Kerrigan & Maciejowski 2000)', () => {
  const softRaw = solved(softFile).loaded.raw as any;
  const hardRaw = JSON.parse(JSON.stringify(softRaw));
  delete hardRaw.constraints.state.soft;
  hardRaw.name = 'motor-hard-speed';

  it('the linear weights exceed the summed multipliers of the hard state rows at every sampled feasible θ (quadprog)', () => {
    // precondition of the exact-penalty property: l_i > Σ_k,sides λ of component i; here checked
    // against the total over all state rows, which bounds every component's sum
    const rnd = rng(4242);
    const box = { lower: softRaw.parameters.lower, upper: softRaw.parameters.upper };
    const lmin = Math.min(...softRaw.constraints.state.soft.linear);
    let worst = 0;
    let feasible = 0;
    const cq = contractQp(hardRaw);
    const Hc = {};
    for (let k = 0; k < 1000; k++) {
      const th = randomInBox(box, rnd);
      const lam = hardMultipliers(cq, th, Hc);
      if (!lam) continue;
      feasible++;
      // rows of the contract QP: input rows first (2 per step, N steps), then state rows
      const nInput = 2 * hardRaw.horizon;
      worst = Math.max(worst, lam.slice(nInput).reduce((s: number, v: number) => s + v, 0));
    }
    expect(feasible).toBeGreaterThan(300);
    expect(worst).toBeLessThan(lmin);
  });

  it('soft law = hard law wherever the hard problem is feasible; slacks are zero there (1000 seeded θ)', () => {
    const soft = solved(softFile).table;
    const hard = tableOf(hardRaw, 'motor-hard.json');
    const rnd = rng(99);
    let compared = 0;
    let softOnly = 0;
    for (let k = 0; k < 1000; k++) {
      const th = randomInBox(soft.box, rnd);
      const h = evaluateTable(hard, th);
      const s = evaluateTable(soft, th);
      expect(s.region, `θ=${th}: soft limits leave every θ feasible`).toBeGreaterThanOrEqual(0);
      if (h.region < 0) {
        softOnly++;
        continue;
      }
      compared++;
      expect(Math.abs(s.u![0] - h.u![0])).toBeLessThanOrEqual(1e-7 * (1 + Math.abs(h.u![0])));
      const mv = soft.regions[s.region].moves;
      for (const b of soft.layout.z.filter((z) => z.kind === 'stateSlack'))
        for (let i = 0; i < b.size; i++) {
          const e = mv.g[b.offset + i] + mv.F[b.offset + i].reduce((acc, f, j) => acc + f * th[j], 0);
          expect(Math.abs(e)).toBeLessThan(1e-8);
        }
    }
    expect(compared).toBeGreaterThan(300);
    expect(softOnly).toBeGreaterThan(100); // the soft table also covers where the hard one cannot
  });

  it('with a small linear weight the soft law differs from the hard law somewhere the hard problem is feasible (the check can fail)', () => {
    const weak = JSON.parse(JSON.stringify(softRaw));
    weak.constraints.state.soft = { quadratic: 0.5 };
    const soft = tableOf(weak, 'weak.json');
    const hard = tableOf(hardRaw, 'motor-hard.json');
    const rnd = rng(5);
    let differ = 0;
    for (let k = 0; k < 500; k++) {
      const th = randomInBox(soft.box, rnd);
      const h = evaluateTable(hard, th);
      if (h.region < 0) continue;
      const s = evaluateTable(soft, th);
      if (Math.abs(s.u![0] - h.u![0]) > 1e-4) differ++;
    }
    expect(differ).toBeGreaterThan(0);
  });

  it('layout: one slack per state component with a finite bound, named, after the moves', () => {
    const { table } = solved(softFile);
    expect(table.layout.features).toEqual(['softState']);
    expect(table.layout.z.map((b) => [b.kind, b.offset, b.size, b.names])).toEqual([
      ['moves', 0, 5, ['volts(0)', 'volts(1)', 'volts(2)', 'volts(3)', 'volts(4)']],
      ['stateSlack', 5, 2, ['speed_slack', 'current_slack']],
    ]);
    // a component without a finite bound has no slack; output slacks follow state slacks
    const raw = {
      plant: { A: [[0.9, 0.1, 0], [0, 0.8, 0.1], [0, 0, 0.7]], B: [[0], [0], [1]], C: [[1, 0, 0], [0, 1, 1]] },
      horizon: 2,
      weights: { state: [[1, 0, 0], [0, 1, 0], [0, 0, 1]], input: [[1]] },
      constraints: {
        state: { lower: [null, -1, null], upper: [2, 1, null], soft: { quadratic: 1 } },
        output: { upper: [null, 3], soft: { quadratic: [1, 2], maxViolation: [null, 0.5] } },
      },
      parameters: { lower: [-1, -1, -1], upper: [1, 1, 1] },
    };
    const f = formulate(parseProblem(raw, 'x.json'));
    expect(f.layout.z.map((b) => [b.kind, b.offset, b.size, b.refersTo])).toEqual([
      ['moves', 0, 2, [0, 1]],
      ['stateSlack', 2, 2, [0, 1]],
      ['outputSlack', 4, 1, [1]],
    ]);
  });
});
