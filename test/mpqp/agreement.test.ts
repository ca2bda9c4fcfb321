import { describe, it, expect } from 'vitest';
import { basename } from 'node:path';
import { exampleFiles, fixtureFiles, solved, rng, randomInBox } from '../helpers/solved.js';
import { qpReference, lpFeasibleReference } from '../helpers/reference.js';
import { evaluateTable } from '../../src/table/table.js';

// The table must reproduce the online MPC it replaces. Reference: quadprog (Goldfarb–Idnani dual
// method, an independent implementation) for u(0); javascript-lp-solver (an LP in z) for feasibility.
const files = [...exampleFiles, ...fixtureFiles];

describe('table law = online QP (quadprog) at 1000 seeded points per problem', () => {
  for (const file of files) {
    it(`${basename(file)}`, () => {
      const { mpqp, table } = solved(file);
      expect(table.stats.complete).toBe(true);
      const rnd = rng(20261201 + basename(file).length);
      let feasible = 0;
      let infeasible = 0;
      let worst = 0;
      for (let k = 0; k < 1000; k++) {
        const theta = randomInBox(mpqp.box, rnd);
        const ref = qpReference(mpqp, theta);
        const lpFeasible = lpFeasibleReference(mpqp, theta);
        expect(lpFeasible, `feasibility of θ=${theta} by LP vs quadprog`).toBe(ref.feasible);
        const e = evaluateTable(table, theta);
        if (!lpFeasible) {
          infeasible++;
          expect(e.region, `infeasible θ=${theta} must lie in no region`).toBe(-1);
          continue;
        }
        feasible++;
        expect(e.region, `feasible θ=${theta} must lie in a region`).toBeGreaterThanOrEqual(0);
        const u = e.u!;
        for (let i = 0; i < mpqp.lawSize; i++) {
          const err = Math.abs(u[i] - ref.z[i]);
          worst = Math.max(worst, err / (1 + Math.abs(ref.z[i])));
          expect(err).toBeLessThanOrEqual(1e-6 * (1 + Math.abs(ref.z[i])));
        }
      }
      expect(feasible + infeasible).toBe(1000);
      expect(feasible).toBeGreaterThan(0);
      expect(worst).toBeLessThan(1e-6);
    });
  }
});

describe('hot-path LP kernel vs javascript-lp-solver on the whole exploration', () => {
  // the same partition (same active sets, same facets) whichever LP engine thins the regions
  for (const file of fixtureFiles.filter((f) => !f.includes('two-carts'))) {
    it(basename(file), async () => {
      const { solvePartition } = await import('../../src/mpqp/solve.js');
      const { mpqp, partition } = solved(file);
      const ref = solvePartition(mpqp, { lp: 'reference' });
      const key = (p: typeof partition) => p.regions.map((r) => `${r.activeSet.join(',')}|${r.A.length}`).sort();
      expect(ref.stats.complete).toBe(true);
      expect(key(ref)).toEqual(key(partition));
    });
  }
});
