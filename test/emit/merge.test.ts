/**
 * Merging regions with the same law: analytic grid cases (the union of a row of unit squares is a
 * rectangle; an L of three squares is not convex), and on the examples the merged table against
 * the online QP solved by quadprog (Goldfarb–Idnani dual method) at seeded points.
 */
import { describe, expect, it } from 'vitest';
import { applyAffine, locateSequential } from '../../src/table/table.js';
import { mergeRegions } from '../../src/partition/merge.js';
import { sampleBox } from '../../src/emit/sample.js';
import { emitC } from '../../src/emit/index.js';
import { lpFeasibleReference, qpReference } from '../helpers/reference.js';
import { compile } from './helpers.js';
import { TREE_EXAMPLES, FIXTURES, exampleTable } from './helpers.js';
import { basename } from 'node:path';
import { gridTable } from './synthetic.js';

describe('analytic grid cases', () => {
  it('a 4×4 grid whose law depends on the row only merges into its 4 rows, each the rectangle [0,4]×[j,j+1]', () => {
    const table = gridTable(4, (_i, j) => ({ F: [[j, -j]], g: [j] }));
    const { table: m, stats } = mergeRegions(table);
    expect(stats.before).toBe(16);
    expect(stats.after).toBe(4);
    for (const r of m.regions) {
      const j = r.law.g[0];
      // bounds of the rectangle: x ≤ 4, −x ≤ 0, y ≤ j+1, −y ≤ −j, four rows and nothing else
      const z = (v: number) => v + 0; // −0 → 0
      const rows = r.A.map((a, k) => `${z(a[0])},${z(a[1])},${z(r.b[k])}`).sort();
      expect(rows).toEqual(['1,0,4', '-1,0,0', `0,1,${j + 1}`, `0,-1,${z(-j)}`].sort());
      for (let x = 0.25; x < 4; x += 0.5) {
        expect(locateSequential(m.regions, [x, j + 0.5])).toBe(m.regions.indexOf(r));
      }
      expect((r as unknown as { mergedFrom: number[] }).mergedFrom.length).toBe(4);
      expect(r.chebyshev.radius).toBeCloseTo(0.5, 9);
    }
  });
  it('an L of three same-law squares is not convex: exactly one pair merges', () => {
    // cells (0,0), (1,0), (0,1) share a law, (1,1) has another: any two adjacent of the three form a
    // rectangle, the three together an L, so exactly one pair merges: 4 → 3 regions
    const table = gridTable(2, (i, j) => (i === 1 && j === 1 ? { F: [[1, 1]], g: [0] } : { F: [[0, 0]], g: [1] }));
    const { table: m, stats } = mergeRegions(table);
    expect(stats.after).toBe(3);
    const other = locateSequential(m.regions, [1.5, 1.5]);
    expect(m.regions[other].law.g[0]).toBe(0);
    // no merged region reaches into the other cell
    for (const r of m.regions) if (r !== m.regions[other]) expect(locateSequential([r], [1.5, 1.5])).toBe(-1);
  });
  it('laws that differ are never merged', () => {
    const table = gridTable(3, (i, j) => ({ F: [[i, j]], g: [0] }));
    expect(mergeRegions(table).stats.after).toBe(9);
  });
});

for (const ex of [...TREE_EXAMPLES, ...FIXTURES])
  describe(`problem ${basename(ex)}`, () => {
    const { table, mpqp } = exampleTable(ex);
    const { table: merged, stats } = mergeRegions(table);
    it('has no more regions, the same law and the same covered set at 5 000 seeded points', () => {
      expect(stats.after).toBeLessThanOrEqual(stats.before);
      for (const p of sampleBox(table.box, 5000, 31)) {
        const a = locateSequential(table.regions, p);
        const b = locateSequential(merged.regions, p);
        expect(b >= 0).toBe(a >= 0);
        if (a < 0) continue;
        const ua = applyAffine(table.regions[a].law, p);
        const ub = applyAffine(merged.regions[b].law, p);
        ua.forEach((v, i) => expect(Math.abs(ub[i] - v)).toBeLessThanOrEqual(1e-9 * (1 + Math.abs(v))));
      }
    });
    // the engine's own agreement criteria: feasible (LP, javascript-lp-solver) ⇔ located, and
    // |u(0) − z_quadprog(0)| ≤ 1e-6 (1 + |z|) with quadprog (Goldfarb–Idnani) as the online QP
    it('passes the online-QP agreement test at 1 000 seeded points', () => {
      let compared = 0;
      for (const p of sampleBox(table.box, 1000, 41)) {
        const r = locateSequential(merged.regions, p);
        const feasible = lpFeasibleReference(mpqp, p);
        expect(r >= 0).toBe(feasible);
        if (!feasible) continue;
        const qp = qpReference(mpqp, p);
        expect(qp.feasible).toBe(true);
        const u = applyAffine(merged.regions[r].law, p);
        u.forEach((v, i) => expect(Math.abs(v - qp.z[i])).toBeLessThanOrEqual(1e-6 * (1 + Math.abs(qp.z[i]))));
        compared++;
      }
      expect(compared).toBeGreaterThan(100);
    });
    it('emits C that compiles with the strict flags, float and double, tree and sequential', () => {
      for (const precision of ['float', 'double'] as const)
        for (const search of ['tree', 'sequential'] as const) {
          const r = emitC(merged, { precision, search, prefix: 'law', mergedFrom: stats.before });
          expect(r.header).toContain(`merged from ${stats.before}`);
          compile('merged', { 'law.h': r.header, 'law.c': r.source }, ['law.c'], ['-c']);
        }
    }, 30000);
  });
