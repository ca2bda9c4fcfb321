import { describe, it, expect } from 'vitest';
import { basename } from 'node:path';
import { exampleFiles, fixtureFiles, solved, rng, randomInBox } from '../helpers/solved.js';
import { contractQp, qpAt, solveContractQp } from '../helpers/contract-qp.js';
import { lpMaximizeReference } from '../../src/lp/reference.js';
import { evaluateTable } from '../../src/table/table.js';

// The table against an independent reading of the contract text (test/helpers/contract-qp.ts:
// cost and limits simulated literally, target by mathjs pinv, ZOH by mathjs expm) whose QP at θ is
// solved by quadprog (Goldfarb–Idnani dual method). Feasibility by a javascript-lp-solver LP on the
// same constraints. Every example and fixture, 1000 seeded θ each.
const files = [...exampleFiles, ...fixtureFiles];

/** Feasibility of A z ≤ b by a javascript-lp-solver LP: max s s.t. A z + s·1 ≤ b, s ≤ 1; feasible when s ≥ −1e-9. */
function lpFeasible(A: number[][], b: number[], nz: number): boolean {
  const n = nz + 1;
  const m = A.length + 1;
  const M = new Float64Array(m * n);
  const rhs = new Float64Array(m);
  A.forEach((row, i) => {
    row.forEach((v, j) => (M[i * n + j] = v));
    M[i * n + nz] = Math.hypot(...row) || 1;
    rhs[i] = b[i];
  });
  M[(m - 1) * n + nz] = 1;
  rhs[m - 1] = 1;
  const c = new Float64Array(n);
  c[nz] = 1;
  const r = lpMaximizeReference(c, M, rhs, m, n);
  return r.status === 'optimal' && r.x[nz] >= -1e-9;
}

describe('table u(0) (z for mpqp files) = the contract QP solved by quadprog, 1000 seeded θ per problem', () => {
  for (const file of files) {
    it(basename(file), () => {
      const { table, loaded } = solved(file);
      expect(table.stats.complete).toBe(true);
      const cq = contractQp(loaded.raw, loaded.model?.terminalSet ?? null);
      expect(cq.ntheta).toBe(table.dims.ntheta);
      expect(cq.nz).toBe(table.dims.nz);
      const rnd = rng(7000 + basename(file).length * 31);
      const Hc: { H?: number[][] } = {};
      let feasible = 0;
      let worst = 0;
      for (let k = 0; k < 1000; k++) {
        const th = randomInBox(table.box, rnd);
        const qp = qpAt(cq, th, Hc);
        const lp = lpFeasible(qp.A, qp.b, cq.nz);
        const z = solveContractQp(cq, th, Hc);
        const e = evaluateTable(table, th);
        if (!lp) {
          expect(e.region, `θ=${th}: the contract LP finds it infeasible, the table must hold no region`).toBe(-1);
          continue;
        }
        expect(z, `θ=${th}: quadprog must solve a feasible QP`).not.toBeNull();
        expect(e.region, `θ=${th}: feasible by LP, the table must cover it`).toBeGreaterThanOrEqual(0);
        feasible++;
        for (let i = 0; i < cq.k; i++) {
          const err = Math.abs(e.u![i] - z![i]) / (1 + Math.abs(z![i]));
          worst = Math.max(worst, err);
        }
      }
      expect(worst, `worst relative |u − u_qp| over ${feasible} feasible points`).toBeLessThanOrEqual(1e-6);
      expect(feasible).toBeGreaterThan(0);
    }, 120_000);
  }
});
