/**
 * Search tree: point location against sequential search (the table's own locateSequential), the
 * reported depth against an independent walk of the node arrays, and an analytic case.
 */
import { describe, expect, it } from 'vitest';
import { locateSequential, regionContains } from '../../src/table/table.js';
import { buildSearchTree, locateTree, locatorMinBytes, TreeTooLargeError, type SearchTree } from '../../src/partition/tree.js';
import { cTarget } from '../../src/emit/targets/c.js';
import { splitBytes } from '../../src/emit/choose.js';
import { sampleBox } from '../../src/emit/sample.js';
import { facetPoints } from '../../src/check/certify.js';
import { tol } from '../../src/tol.js';
import type { TableFile } from '../../src/table/format.js';
import { TREE_EXAMPLES, exampleTable } from './helpers.js';
import { arrangementTable, gridTable } from './synthetic.js';

/** Independent walk: depth of every leaf and how often each leaf is reached. */
function walk(tree: SearchTree): { depths: Map<number, number>; visits: Map<number, number> } {
  const depths = new Map<number, number>();
  const visits = new Map<number, number>();
  const go = (ref: number, d: number): void => {
    if (ref < 0) {
      const leaf = -ref - 1;
      depths.set(leaf, d);
      visits.set(leaf, (visits.get(leaf) ?? 0) + 1);
      return;
    }
    go(tree.nodeLeft[ref], d + 1);
    go(tree.nodeRight[ref], d + 1);
  };
  go(tree.root, 0);
  return { depths, visits };
}

function checkTree(name: string, table: TableFile): void {
  describe(name, () => {
    const tree = buildSearchTree(table.regions, table.dims.ntheta);
    it('returns the same region as sequential search on 20 000 seeded points', () => {
      let located = 0;
      for (const p of sampleBox(table.box, 20000, 21)) {
        const s = locateSequential(table.regions, p);
        expect(locateTree(tree, p, table.regions)).toBe(s);
        if (s >= 0) located++;
      }
      expect(located).toBeGreaterThan(5000);
    });
    it('on points just inside/outside every facet: found exactly when sequential search finds a region, and the region holds θ', () => {
      for (const p of facetPoints(table)) {
        const s = locateSequential(table.regions, p);
        const t = locateTree(tree, p, table.regions);
        expect(t >= 0).toBe(s >= 0);
        if (t >= 0) expect(regionContains(table.regions[t], p, tol.inside)).toBe(true);
      }
    });
    it('points exactly on shared facets (Chebyshev centre projected onto the facet) find a region holding them', () => {
      let tested = 0;
      for (const r of table.regions)
        r.A.forEach((a, i) => {
          if (r.facets[i].neighbours.length === 0) return;
          let ac = 0;
          for (let j = 0; j < a.length; j++) ac += a[j] * r.chebyshev.center[j];
          const p = r.chebyshev.center.map((c, j) => c + (r.b[i] - ac) * a[j]);
          if (!regionContains(r, p, tol.inside)) return; // the projection can leave the region past another facet
          tested++;
          const t = locateTree(tree, p, table.regions);
          expect(t).toBeGreaterThanOrEqual(0);
          expect(regionContains(table.regions[t], p, tol.inside)).toBe(true);
        });
      expect(tested).toBeGreaterThan(table.regions.length / 2);
    });
    it('reports the true worst depth over all leaves; every leaf reached once, every region in some leaf', () => {
      const { depths, visits } = walk(tree);
      expect(depths.size).toBe(tree.leafStart.length - 1);
      expect([...visits.values()].every((v) => v === 1)).toBe(true);
      expect(tree.stats.maxDepth).toBe(Math.max(...depths.values()));
      expect(tree.stats.leaves).toBe(depths.size);
      const inLeaf = new Set(tree.leafRegions);
      for (let r = 0; r < table.regions.length; r++) expect(inLeaf.has(r)).toBe(true);
    });
  });
}

describe('sides decided by LP (lpMaximize) instead of vertices', () => {
  // same table, vertex enumeration disabled: every (region, hyperplane) side comes from two LPs;
  // the vertex route (exact enumeration) is the reference
  const table = arrangementTable({ lower: [-1, -1, -1], upper: [1, 1, 1], planes: 5, seed: 8 });
  const byVertices = buildSearchTree(table.regions, 3);
  const byLp = buildSearchTree(table.regions, 3, { vertexBudget: 0 });
  it('builds the same tree', () => {
    expect(byVertices.stats.lps).toBe(0);
    expect(byLp.stats.lps).toBeGreaterThan(0);
    expect(byLp.nodeHyperplane).toEqual(byVertices.nodeHyperplane);
    expect(byLp.leafRegions).toEqual(byVertices.leafRegions);
  });
});

describe('analytic: an 8×8 grid of unit squares', () => {
  // Halving lines x = 4, y = 4, … split 2^k×2^k cells without cutting any: a perfectly balanced
  // tree of depth log2(64) = 6 with one square per leaf exists, and the min-max rule finds it.
  const table = gridTable(8, (i, j) => ({ F: [[i, j]], g: [i * 8 + j] }));
  const tree = buildSearchTree(table.regions, 2);
  it('has depth 6, 64 leaves of one region, 63 nodes', () => {
    expect(tree.stats.maxDepth).toBe(6);
    expect(tree.stats.leaves).toBe(64);
    expect(tree.stats.nodes).toBe(63);
    expect(tree.stats.maxLeafSize).toBe(1);
  });
  it('locates the centre of cell (i, j) in that cell', () => {
    for (let i = 0; i < 8; i++)
      for (let j = 0; j < 8; j++) {
        const r = locateTree(tree, [i + 0.5, j + 0.5], table.regions);
        expect(table.regions[r].law.g[0]).toBe(i * 8 + j);
      }
  });
  it('returns −1 outside the box', () => {
    expect(locateTree(tree, [-0.1, 3], table.regions)).toBe(-1);
    expect(locateTree(tree, [3, 8.001], table.regions)).toBe(-1);
  });
});

for (const ex of TREE_EXAMPLES) checkTree(`example ${ex}`, exampleTable(ex).table);
checkTree('synthetic arrangement of 30 lines in 2-D', arrangementTable({ lower: [-3, -2], upper: [3, 2], planes: 30, seed: 3 }));

describe('giving up once the arrays are sure to pass a byte budget (TreeOptions.giveUpBytes)', () => {
  // the location bytes are the C cost report's, which test/emit/cost.test.ts holds equal to gcc's sizeof
  for (const [name, table] of [
    ['2-D arrangement of 30 lines', arrangementTable({ lower: [-3, -2], upper: [3, 2], planes: 30, seed: 3 })],
    ['3-D arrangement of 14 planes', arrangementTable({ lower: [-2, -2, -2], upper: [2, 2, 2], planes: 14, seed: 5 })],
  ] as const)
    it(`${name}: the bound is below the finished tree's bytes, and the tree stops only past them`, () => {
      const n = table.dims.ntheta;
      const full = buildSearchTree(table.regions, n);
      const bytes = splitBytes(cTarget.cost(cTarget.build(table, 'float', 'tree', full)), 'float').location;
      expect(locatorMinBytes(n, full.stats.nodes, full.stats.leaves, full.leafRegions.length)).toBeLessThanOrEqual(bytes);
      // a budget of exactly the finished bytes never stops the build: same tree
      const same = buildSearchTree(table.regions, n, { giveUpBytes: bytes });
      expect({ ...same, stats: { ...same.stats, buildSeconds: 0 } }).toEqual({ ...full, stats: { ...full.stats, buildSeconds: 0 } });
      // a budget below the bound of the finished tree stops it, with the reason
      const under = locatorMinBytes(n, full.stats.nodes, full.stats.leaves, full.leafRegions.length) - 1;
      expect(() => buildSearchTree(table.regions, n, { giveUpBytes: under })).toThrow(TreeTooLargeError);
      expect(() => buildSearchTree(table.regions, n, { giveUpBytes: under })).toThrow(/location arrays of at least \d+ B, over the budget/);
    });
});
