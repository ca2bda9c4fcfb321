/**
 * Grid cells deep inside one region (gridSureCells): the float build takes that region without a
 * test. Checked on every seeded point and on the corners of every such cell (the cell's exact
 * corners and its widened corners, where the rounding of the cell computation can still map θ into
 * it): the answer equals the full best-fit scan of the cell (the build with the flags cleared), bit
 * for bit; the region is the one a sequential first-fit scan in double over the table's own rows
 * finds (written here: the common practice of point location, every region's A θ ≤ b + tol.inside in
 * index order); and the generated C, compiled with gcc's strict C99 flags, returns the same region
 * and the same float bits (its self-test).
 */
import { describe, expect, it } from 'vitest';
import { emitC } from '../../src/emit/index.js';
import { emitSelfTest } from '../../src/emit/targets/c.js';
import { evaluateArrays, type EmitArrays } from '../../src/emit/arrays.js';
import { gridCell, type GridIndex } from '../../src/emit/grid.js';
import { sampleBox } from '../../src/emit/sample.js';
import { tol } from '../../src/tol.js';
import type { TableFile } from '../../src/table/format.js';
import { compile, exampleTable, run } from './helpers.js';
import { gridTable } from './synthetic.js';

/** Sequential first fit in double, written here: the first region (index order) whose every row holds within tol.inside. */
function firstFit(table: TableFile, theta: number[]): number {
  return table.regions.findIndex((r) => r.A.every((a, i) => a.reduce((s, v, j) => s + v * theta[j], 0) <= r.b[i] + tol.inside));
}

function checkSure(name: string, table: TableFile): void {
  describe(name, () => {
    it('sure cells: the region without a test equals the full scan, sequential search and the C bits', () => {
      const r = emitC(table, { precision: 'float', search: 'grid', prefix: 'law' });
      const ar = r.arrays;
      const g = r.locator as GridIndex;
      const sure = ar.leafSure ?? [];
      const cells = sure.map((v, k) => (v ? k : -1)).filter((k) => k >= 0);
      expect(cells.length).toBeGreaterThan(0);
      const full: EmitArrays = { ...ar, leafSure: [] };
      const n = table.dims.ntheta;
      // corners of every sure cell, exact and widened by the cell's rounding allowance (nudged inward by
      // one part in 10⁹ so they stay in the widened cell)
      const corners: number[][] = [];
      for (const cell of cells) {
        const idx: number[] = [];
        let c = cell;
        for (let j = n - 1; j >= 0; j--) {
          idx[j] = c % g.cells[j];
          c = Math.floor(c / g.cells[j]);
        }
        for (const widen of [0, 0.999999999])
          for (let mask = 0; mask < 2 ** n; mask++)
            corners.push(idx.map((k, j) => ((mask >> j) & 1 ? g.lower[j] + (k + 1) / g.scale[j] + widen * g.delta[j] : g.lower[j] + k / g.scale[j] - widen * g.delta[j])));
      }
      const points = [...sampleBox(table.box, 20000, 31), ...corners];
      let inSure = 0;
      for (const p of points) {
        const t = p.map(Math.fround);
        const got = evaluateArrays(ar, p);
        const ref = evaluateArrays(full, p);
        expect(got.region).toBe(ref.region);
        expect(got.u).toEqual(ref.u);
        if (!sure[gridCell(g, t, true)]) continue;
        inSure++;
        // deep inside its region: sequential first fit in double at the float θ finds the same region
        expect(firstFit(table, t)).toBe(got.region);
      }
      expect(inSure).toBeGreaterThan(1000);
      // the generated C: the same region and bits on every point (its self-test counts mismatches)
      const expected = points.map((p) => evaluateArrays(ar, p));
      expect(r.source).toContain('the cell lies deep inside region');
      const { exe } = compile('sure', { 'law.h': r.header, 'law.c': r.source, 'law_selftest.c': emitSelfTest(ar, 'law', points, expected) }, ['law.c', 'law_selftest.c']);
      const res = run(exe);
      expect(res.status).toBe(0);
      expect(res.stdout.trim().split('\n').pop()).toBe(`selftest: ${points.length} points, 0 mismatches`);
      // double builds keep first fit and have no sure cells
      const d = emitC(table, { precision: 'double', search: 'grid', prefix: 'law' });
      expect((d.arrays.leafSure ?? []).some((v) => v)).toBe(false);
      expect(d.source).not.toContain('the cell lies deep inside region');
    }, 120000);
  });
}

checkSure('6 x 6 rectangles', gridTable(6, (i, j) => ({ F: [[0.5 * i - 1, 0.25 * j]], g: [0.1 * (i - j)] })));
checkSure('example buck-duty-cycle', exampleTable('buck-duty-cycle.json').table);
