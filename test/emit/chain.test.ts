/**
 * The benchmark family of test/bench/locate.bench.ts (an n-th order integrator chain of our own,
 * |u| ≤ 1, θ in [−2, 2]ⁿ) at the bench's horizons, 2-D to 6-D: the float build that `emit` picks
 * by its cost model is certified SAFE with 0 points lost on 20 000 seeded points plus the facet and
 * rounding-window points, and checked against outside references: its u on 300 seeded points
 * against quadprog's (Goldfarb–Idnani dual method) optimal u(0) of the same condensed QP within the
 * certificate's tolerance plus 1e-6 (the QP's own accuracy), and the certificate's worst point
 * recomputed from the table's double law (applyAffine) and IEEE single precision (Math.fround,
 * IEEE 754, common practice).
 */
import { describe, expect, it } from 'vitest';
import { parseProblem, solveProblem } from '../../src/index.js';
import { emitC } from '../../src/emit/index.js';
import { evaluateArrays } from '../../src/emit/arrays.js';
import { certifyFloat } from '../../src/check/certify.js';
import { sampleBox } from '../../src/emit/sample.js';
import { applyAffine } from '../../src/table/table.js';
import { locateRegion } from '../../src/table/locator.js';
import { tol } from '../../src/tol.js';
import { chainProblem, HORIZON } from '../bench/locate.bench.js';
import { makeQp } from '../bench/emit.bench.js';

for (const n of [2, 3, 4, 5, 6])
  describe(`chain ${n}-D (N = ${HORIZON[n]})`, () => {
    it('float build of the cost model: SAFE with 0 points lost, u within tolerance of quadprog, worst point recomputed', () => {
      const { mpqp, table } = solveProblem(parseProblem(chainProblem(n, HORIZON[n]), `chain-${n}d`), { timeLimit: 240 });
      expect(table.stats.complete).toBe(true);
      const r = emitC(table, { precision: 'float', search: 'auto', prefix: 'law' });
      const cert = certifyFloat(table, r.arrays, { samples: 20000 });
      expect(cert.safe).toBe(true);
      expect(cert.lostInFloat).toBe(0);
      expect(cert.maxAbsDiff).toBeLessThanOrEqual(cert.tolerance);
      // the worst point, from the double law and the float emulation
      if (cert.worstTheta) {
        const rd = locateRegion(table.regions, cert.worstTheta, tol.inside, table.box);
        const ud = applyAffine(table.regions[rd].law, cert.worstTheta);
        const uf = evaluateArrays(r.arrays, cert.worstTheta).u!;
        expect(Math.max(...ud.map((v, i) => Math.abs(v - uf[i])))).toBe(cert.maxAbsDiff);
      }
      // quadprog on the same condensed QP: the chain has input limits only, so every θ of the box is feasible
      const qp = makeQp(mpqp);
      for (const p of sampleBox(table.box, 300, 5)) {
        const e = evaluateArrays(r.arrays, p);
        expect(e.region).toBeGreaterThanOrEqual(0);
        expect(Math.abs(e.u![0] - qp(p))).toBeLessThanOrEqual(cert.tolerance + 1e-6);
      }
    }, 600000);
  });
