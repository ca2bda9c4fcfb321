/**
 * The audit's agreement check on a 4-D table (two carts on a spring, test/fixtures/problems/
 * two-carts-4d.json, our own scenario) against the online QP solved by quadprog (npm package
 * quadprog: Goldfarb & Idnani's dual active-set method, via test/helpers/reference.ts), on a seeded
 * sample plus points pushed to just inside and just outside every facet. Near thin regions the
 * location slack (1e-8) used to hand points to a neighbour's law; the table must now agree with
 * quadprog within the audit tolerance at every point, and a point the table holds only by the slack
 * where quadprog finds no solution is counted apart, never as a law.
 */
import { describe, expect, it } from 'vitest';
import { join } from 'node:path';
import { root, solved } from '../helpers/solved.js';
import { qpReference } from '../helpers/reference.js';
import { checkAgreement } from '../../src/check/audit.js';
import { facetPoints } from '../../src/check/certify.js';
import { locatePoint } from '../../src/table/locator.js';
import { applyAffine } from '../../src/table/table.js';
import { tol } from '../../src/tol.js';

const file = join(root, 'test', 'fixtures', 'problems', 'two-carts-4d.json');

describe('audit agreement on a 4-D table', { timeout: 600000 }, () => {
  it('PASS against quadprog: no law above the tolerance, none where quadprog is infeasible', () => {
    const s = solved(file);
    const { table, mpqp } = s;
    expect(table.dims.ntheta).toBe(4);
    const nu = table.dims.nu;
    const online = (th: number[]) => {
      const r = qpReference(mpqp, th); // quadprog (Goldfarb–Idnani), independent of the engine
      return r.feasible ? r.z.slice(0, nu) : null;
    };
    const rep = checkAgreement({ table, model: s.loaded.model!, mpqp, recomputedHash: table.problemHash, problemFileHash: null, toolVersion: 'test', online, embedded: null as never, samples: 1000, seed: 5 });
    expect(rep.data.compared).toBeGreaterThan(1000);
    expect(rep.data.overTolerance, rep.line).toBe(0);
    expect(rep.data.tableOnly, rep.line).toBe(0);
    expect(rep.data.maxAbsDiff).toBeLessThanOrEqual(rep.data.tolerance);
    expect(rep.verdict).toBe('PASS');

    // the facet points again, written out: wherever a region holds θ exactly, its law is quadprog's
    // (within the tolerance); the lowest-index region within the slack may differ from it
    let exact = 0;
    let firstFitDiffers = 0;
    for (const th of facetPoints(table)) {
      if (!th.every((v, j) => v >= table.box.lower[j] && v <= table.box.upper[j])) continue;
      const loc = locatePoint(table.regions, th, tol.inside, table.box);
      if (loc.region < 0 || loc.violation > 0) continue;
      const uo = online(th);
      expect(uo, `θ=${th}`).not.toBeNull();
      exact++;
      const ut = applyAffine(table.regions[loc.region].law, th);
      ut.forEach((u, i) => expect(Math.abs(u - uo![i]), `θ=${th}`).toBeLessThanOrEqual(rep.data.tolerance));
      const first = table.regions.findIndex((R) => R.A.every((a, r) => a.reduce((acc, v, j) => acc + v * th[j], 0) <= R.b[r] + tol.inside));
      if (first !== loc.region) firstFitDiffers++;
    }
    expect(exact).toBeGreaterThan(1000);
    console.log(`two-carts-4d: ${table.regions.length} regions, ${exact} facet points held exactly, ${firstFitDiffers} where the first region within the slack is another one; ${rep.line}`);
  });
});
