import { expect } from 'vitest';
import { rng, randomInBox } from './solved.js';
import { qpReference } from './reference.js';
import { evaluateTable } from '../../src/table/table.js';
import type { TableFile } from '../../src/table/format.js';
import type { MpqpProblem } from '../../src/mpqp/types.js';

/**
 * A table against quadprog (Goldfarb–Idnani dual method, the online-QP reference) at `points`
 * seeded points of the parameter box: a region exactly where the online QP is feasible, and there
 * the same u(0) within 1e-6 relative. At least `minFeasible` of the points must be feasible, so
 * that the check cannot pass on an empty sample.
 */
export function expectAgreesWithQuadprog(table: TableFile, mpqp: MpqpProblem, seed: number, points: number, minFeasible: number): void {
  const rnd = rng(seed);
  let feasible = 0;
  for (let k = 0; k < points; k++) {
    const th = randomInBox(mpqp.box, rnd);
    const ref = qpReference(mpqp, th);
    const e = evaluateTable(table, th);
    expect(e.region >= 0, `θ=${th}`).toBe(ref.feasible);
    if (!ref.feasible) continue;
    feasible++;
    for (let i = 0; i < mpqp.lawSize; i++) expect(Math.abs(e.u![i] - ref.z[i])).toBeLessThan(1e-6 * (1 + Math.abs(ref.z[i])));
  }
  expect(feasible).toBeGreaterThan(minFeasible);
}
