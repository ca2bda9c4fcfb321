/**
 * Library calls the commands are made of, checked without the CLI. References: javascript-lp-solver
 * (lpFeasibleReference, an independent simplex) for an empty feasible set; quadprog (qpReference,
 * Goldfarb–Idnani) for the law the library evaluates; the size arithmetic of the set-up estimate
 * written out from its documented formula (common practice: 8 bytes per double).
 */
import { describe, expect, it } from 'vitest';
import { formulate, formulateFeasible, InputError, parseProblem, setupSize, solveProblem, evaluatePoints, evaluationCsv } from '../../src/index.js';
import { motorEmptyProblem, motorProblem } from '../cli/scenarios.js';
import { lpFeasibleReference, qpReference } from '../helpers/reference.js';
import { randomInBox, rng } from '../helpers/solved.js';

describe('solve as library calls', () => {
  it('formulateFeasible (and solveProblem) refuse an empty feasible set, which javascript-lp-solver confirms', () => {
    const loaded = parseProblem(motorEmptyProblem(), 'motor-empty.json');
    const { mpqp } = formulate(loaded);
    const rnd = rng(17);
    for (let k = 0; k < 200; k++) expect(lpFeasibleReference(mpqp, randomInBox(mpqp.box, rnd))).toBe(false);
    expect(() => formulateFeasible(loaded, 'motor-empty.json')).toThrow(InputError);
    expect(() => formulateFeasible(loaded, 'motor-empty.json')).toThrow(/^motor-empty\.json: constraints: the feasible set is empty/);
    expect(() => solveProblem(loaded)).toThrow(/constraints: the feasible set is empty/);
  });

  it('setupSize: null for a direct mpQP, else the estimate in words', () => {
    const loaded = parseProblem(motorProblem(), 'motor.json');
    const s = setupSize(loaded)!;
    expect(s.nz).toBe(loaded.model!.Nu * loaded.model!.m);
    expect(s.bytes % 8).toBe(0);
    expect(s.text).toMatch(new RegExp(`^n_z = ${s.nz}, ${s.rows} constraint rows, about [0-9.]+ (KiB|MiB|GiB) to set up$`));
  });

  it('evaluatePoints/evaluationCsv with clamp: u(0) is quadprog\'s, saturated to the input limits', () => {
    const solved = solveProblem(parseProblem(motorProblem(), 'motor.json'));
    const { table, mpqp } = solved;
    const rnd = rng(23);
    const pts = Array.from({ length: 200 }, () => randomInBox(mpqp.box, rnd));
    const lo = table.inputLimits.lower.map((v) => v ?? -Infinity);
    const hi = table.inputLimits.upper.map((v) => v ?? Infinity);
    const got = evaluatePoints(table, pts, { clamp: true });
    let compared = 0;
    got.forEach((e, k) => {
      const ref = qpReference(mpqp, pts[k]);
      if (e.region < 0 || !ref.feasible) return;
      compared++;
      e.u!.forEach((u, i) => expect(Math.abs(u - Math.min(hi[i], Math.max(lo[i], ref.z[i])))).toBeLessThan(1e-6));
    });
    expect(compared).toBeGreaterThan(50);
    const csv = evaluationCsv(table, pts.slice(0, 3), { clamp: true }).trim().split('\n');
    expect(csv[0]).toBe([...table.thetaNames, 'region', ...table.inputNames].join(','));
    expect(csv).toHaveLength(4);
  });
});
