/**
 * The point-location structures (capped hyperplane tree, broad hyperplane tree, bounding-box tree,
 * cell grid, hyperplane tree, sequential) against sequential search, 2-D to 6-D: the TypeScript locators on 20 000 seeded
 * points and on points pushed just inside/outside every facet; the generated C of every structure
 * and precision compiled with gcc's strict C99 flags and checked bit for bit against the
 * TypeScript evaluator (in double also against the table's own law, applyAffine); the byte budget
 * and the float certificate. References: sequential search by definition — every region in index
 * order, the first holding θ within tol.inside (regionContains; common practice: what the
 * sequential C does) — and applyAffine of src/table (the table's own double law), exact IEEE single precision emulated with Math.fround (IEEE 754, common practice).
 */
import { describe, expect, it } from 'vitest';
import { tol } from '../../src/tol.js';
import { applyAffine, regionContains } from '../../src/table/table.js';
import type { CriticalRegion } from '../../src/mpqp/types.js';

/**
 * Sequential search as the generated code does it (first fit): the first region in index order that
 * holds θ within tol.inside. (The table's own locator prefers exact containment, then the least
 * residual; the structures here follow the sequential C instead.)
 */
function locateSequential(regions: CriticalRegion[], p: ArrayLike<number>): number {
  return regions.findIndex((r) => regionContains(r, p));
}
import { buildSearchTree, firstHolding, locateTree } from '../../src/partition/tree.js';
import { gridCell, type GridIndex } from '../../src/emit/grid.js';
import { buildBoxTree, locateBoxTree } from '../../src/partition/boxtree.js';
import { emitC } from '../../src/emit/index.js';
import { emitSelfTest } from '../../src/emit/targets/c.js';
import { evaluateArrays } from '../../src/emit/arrays.js';
import { buildLocator, LOCATION_BUDGET, measureCandidates, pickCandidate, splitBytes } from '../../src/emit/choose.js';
import { cTarget } from '../../src/emit/targets/c.js';
import { sampleBox } from '../../src/emit/sample.js';
import { certifyFloat, facetPoints } from '../../src/check/certify.js';
import type { TableFile } from '../../src/table/format.js';
import { EXAMPLES, compile, exampleTable, run } from './helpers.js';
import { arrangementTable } from './synthetic.js';

const SYNTHETIC: [string, () => TableFile][] = [2, 3, 4, 5, 6].map((n) => [
  `synthetic ${n}-D arrangement`,
  () => arrangementTable({ lower: new Array(n).fill(-1), upper: new Array(n).fill(1), planes: n <= 3 ? 10 : 7, seed: 60 + n, nu: n === 3 ? 2 : 1 }),
]);

function checkLocators(name: string, get: () => TableFile): void {
  describe(`${name}: locators`, () => {
    const table = get();
    const facet = facetPoints(table);
    const sample = sampleBox(table.box, 20000, 77);
    // the sequential answers, computed once per table and shared by every structure's checks (on the
    // 4-D crane example they are 121 704 facet points against 2 411 regions)
    let seqSample: number[] | undefined;
    let seqFacet: number[] | undefined;
    const sequentialSample = () => (seqSample ??= sample.map((p) => locateSequential(table.regions, p)));
    const sequentialFacet = () => (seqFacet ??= facet.map((p) => locateSequential(table.regions, p)));
    const capped = buildLocator(table, 'capped') as ReturnType<typeof buildSearchTree>;
    const broad = buildLocator(table, 'broad') as ReturnType<typeof buildSearchTree>;
    const box = buildLocator(table, 'boxtree') as ReturnType<typeof buildBoxTree>;
    // the grid within a budget large enough for every table here (the cost model's budget may reject it)
    const grid = buildLocator(table, 'grid', { maxBytes: 1e6 }) as GridIndex;
    // first fit over the cell's candidates, in ascending index as the builder lists them
    const locateGrid = (p: number[]) => {
      const c = gridCell(grid, p, false);
      return firstHolding(grid.leafRegions, grid.leafStart[c], grid.leafStart[c + 1], p, table.regions, table.dims.ntheta, tol.inside);
    };
    for (const [kind, locate] of [
      ['capped', (p: number[]) => locateTree(capped, p, table.regions)],
      ['broad', (p: number[]) => locateTree(broad, p, table.regions)],
      ['boxtree', (p: number[]) => locateBoxTree(box, p, table.regions)],
      ['grid', locateGrid],
    ] as const) {
      it(`${kind}: the same region as sequential search on 20 000 seeded points`, () => {
        let located = 0;
        const seq = sequentialSample();
        for (const [i, p] of sample.entries()) {
          const s = seq[i];
          expect(locate(p)).toBe(s);
          if (s >= 0) located++;
        }
        expect(located).toBeGreaterThan(2000);
      }, 900000);
      // the first structure's check pays for the sequential answers (crane: 8 min under load 12)
      it(`${kind}: the same region as sequential search just inside/outside every facet (${facet.length} points)`, () => {
        const seq = sequentialFacet();
        facet.forEach((p, i) => expect(locate(p)).toBe(seq[i]));
      }, 900000);
    }
    it('every region is found at its own Chebyshev centre by both trees', () => {
      table.regions.forEach((r, k) => {
        const tr = locateTree(capped, r.chebyshev.center, table.regions);
        const bx = locateBoxTree(box, r.chebyshev.center, table.regions);
        // the centre lies inside region k only (a partition), so both find k
        if (regionContains(r, r.chebyshev.center)) {
          expect(tr).toBe(k);
          expect(bx).toBe(k);
        }
      });
    }, 300000);
  });
}

function checkC(name: string, get: () => TableFile): void {
  describe(`${name}: generated C`, () => {
    const table = get();
    const facet = facetPoints(table);
    const step = Math.max(1, Math.floor(facet.length / 1500));
    const points = [...sampleBox(table.box, 3000, 5), ...facet.filter((_, i) => i % step === 0)];
    for (const search of ['capped', 'broad', 'boxtree', 'grid', 'sequential'] as const)
      for (const precision of ['double', 'float'] as const)
        it(`${search}, ${precision}: strict C99 compiles and equals the TypeScript evaluator bit for bit`, () => {
          // the grid within a budget large enough for every table here
          const r = emitC(table, { precision, search, prefix: 'loc', locatorOptions: search === 'grid' ? { maxBytes: 1e6 } : undefined });
          const expected = points.map((p) => evaluateArrays(r.arrays, p));
          const { exe } = compile('locate', { 'loc.h': r.header, 'loc.c': r.source, 'loc_selftest.c': emitSelfTest(r.arrays, 'loc', points, expected) }, ['loc.c', 'loc_selftest.c']);
          const res = run(exe);
          expect(res.stdout.trim().split('\n').pop()).toBe(`selftest: ${points.length} points, 0 mismatches`);
          expect(res.status).toBe(0);
          expect(r.header).toContain(`${search} search, named by the caller`);
          if (precision === 'double')
            points.forEach((p, i) => {
              // double: first fit, exactly sequential search and the table's law
              const s = locateSequential(table.regions, p);
              expect(expected[i].region).toBe(s);
              if (s >= 0) expect(expected[i].u).toEqual(applyAffine(table.regions[s].law, p));
            });
          else
            points.forEach((p, i) => {
              // float: a located region holds the float θ within the build's slack
              if (expected[i].region >= 0) expect(regionContains(table.regions[expected[i].region], p.map(Math.fround), r.arrays.slack * 1.01)).toBe(true);
            });
        }, 120000);
  });
}

for (const [name, get] of SYNTHETIC) {
  checkLocators(name, get);
  checkC(name, get);
}
for (const ex of EXAMPLES) checkLocators(`example ${ex}`, () => exampleTable(ex).table);

describe('examples: the cost model and the float certificate', () => {
  for (const ex of EXAMPLES)
    it(`${ex}: the chosen structure fits the byte budget, is safe in float, and the certificate is SAFE with 0 points lost`, () => {
      const table = exampleTable(ex).table;
      const cands = measureCandidates(table, cTarget, 'float', ['capped', 'broad', 'boxtree', 'grid', 'sequential']);
      const { chosen, reason } = pickCandidate(cands);
      expect(chosen.rejected).toBeNull();
      expect(chosen.location).toBeLessThanOrEqual(LOCATION_BUDGET * chosen.regions);
      // the byte split is the cost report's own arrays
      expect(splitBytes(chosen.cost!, 'float')).toEqual({ location: chosen.location, regions: chosen.regions });
      expect(reason[0]).toContain(chosen.search);
      const r = emitC(table, { precision: 'float', search: chosen.search, prefix: 'x', locator: chosen.locator ?? undefined });
      const cert = certifyFloat(table, r.arrays);
      expect(cert.lostInFloat).toBe(0);
      expect(cert.safe).toBe(true);
      expect(cert.verdict.startsWith('SAFE')).toBe(true);
      // the certificate probes the rounding window of every shared facet, where best fit may pick the
      // neighbour: the law difference measured there stays within the derived bound |δ|·(S_R + S_N)
      // (continuity of the affine pieces across the facet, u_R − u_N = δ·(a·θ − b); DEVELOPERS.md)
      expect(cert.relocated).toBeGreaterThan(0);
      expect(cert.relocatedMaxLawDiff).toBeLessThanOrEqual(cert.bounds.overlap);
    }, 300000);
});
