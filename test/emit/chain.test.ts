/**
 * The benchmark family of test/bench/locate.bench.ts (an n-th order integrator chain of our own,
 * |u| ≤ 1, horizon 20 in every dimension, θ in the family's box [−b, b]ⁿ), 2-D to 6-D: the float build that `emit` picks
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
import { FAMILY, familyProblem, lqrSettlingSteps } from '../bench/locate.bench.js';
import { makeQp } from '../bench/emit.bench.js';

for (const n of [2, 3, 4, 5, 6])
  describe(`chain ${n}-D (N = ${FAMILY[n].horizon}, h = ${FAMILY[n].sampleTime})`, () => {
    it('float build of the cost model: SAFE with 0 points lost, u within tolerance of quadprog, worst point recomputed', () => {
      const { mpqp, table } = solveProblem(parseProblem(familyProblem(n), `chain-${n}d`), { timeLimit: 240 });
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

describe('the bench family covers the settling time', () => {
  it('scalar case against the closed-form scalar Riccati solution (handbook formula, common practice)', () => {
    // n = 1: a = 0.98, b = h, q = 1, r = 0.1; P solves b²P² + (r − q b² − a² r) P − q r = 0 (the
    // scalar discrete algebraic Riccati equation), K = a b P / (r + b² P), a_cl = a − b K, and the loop
    // is inside the 2 % band from the first m with a_cl^m ≤ 0.02 on
    for (const h of [0.1, 0.3, 0.7]) {
      const [a, b, q, r] = [0.98, h, 1, 0.1];
      const c1 = r - q * b * b - a * a * r;
      const P = (-c1 + Math.sqrt(c1 * c1 + 4 * b * b * q * r)) / (2 * b * b);
      const acl = a - (b * (a * b * P)) / (r + b * b * P);
      expect(acl).toBeGreaterThan(0);
      expect(lqrSettlingSteps(1, h)).toBe(Math.ceil(Math.log(0.02) / Math.log(acl)));
    }
  });
  it('every dimension: the unconstrained LQR loop settles within the horizon N = 20', () => {
    for (const n of [2, 3, 4, 5, 6]) {
      expect(FAMILY[n].horizon).toBe(20);
      const s = lqrSettlingSteps(n, FAMILY[n].sampleTime);
      expect(s).toBeLessThanOrEqual(FAMILY[n].horizon);
      // and the sample time is not tiny: the loop still needs most of the horizon (≥ 3/4 of it)
      expect(s).toBeGreaterThanOrEqual(15);
    }
  });
});
