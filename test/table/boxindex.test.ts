import { describe, expect, it } from 'vitest';
import { join } from 'node:path';
import { BoxIndex, growPart, indexFromBytes, indexToBytes, joinTree, planTree } from '../../src/table/boxindex.js';
import { boundingBoxByLp, regionBoundingBox, tableLocator } from '../../src/table/locator.js';
import { referenceBox } from '../helpers/lp-box.js';
import { loadProblem, solveProblem } from '../../src/index.js';
import type { TableFile } from '../../src/table/format.js';
import { arrangementTable } from '../emit/synthetic.js';
import { gridTable } from '../emit/synthetic.js';
import { rng } from '../helpers/solved.js';

// Reference: the point-location rules applied literally by a scan written here (not the project's
// code path). `exact-first`: a region holding θ exactly (every row a·θ ≤ b) wins, the lowest index
// among several; only when none does, the region with the least largest residual within the slack
// (ties: lowest). `first`: the lowest index holding θ within the slack.
function reference(t: TableFile, th: ArrayLike<number>, slack: number, rule: Rule): number {
  let near = -1;
  let nearV = Infinity;
  for (let i = 0; i < t.regions.length; i++) {
    const r = t.regions[i];
    let worst = -Infinity;
    for (let k = 0; k < r.b.length; k++) {
      let s = 0;
      for (let j = 0; j < th.length; j++) s += r.A[k][j] * th[j];
      const v = s - r.b[k];
      worst = Math.max(worst, Number.isNaN(v) ? Infinity : v);
    }
    if (worst <= (rule === 'first' ? slack : Math.min(0, slack))) return i;
    if (worst <= slack && worst < nearV) {
      near = i;
      nearV = worst;
    }
  }
  return near;
}

/** Seeded points: uniform in the box (a little beyond it too), Chebyshev centres, and points on and just beside facets (where the rule matters). */
function probePoints(t: TableFile, count: number, seed: number): number[][] {
  const rnd = rng(seed);
  const n = t.dims.ntheta;
  const pts: number[][] = [];
  for (let i = 0; i < count; i++) pts.push(Array.from({ length: n }, (_, j) => t.box.lower[j] + (1.1 * rnd() - 0.05) * (t.box.upper[j] - t.box.lower[j])));
  for (const r of t.regions.slice(0, 200)) {
    const c = r.chebyshev.center;
    pts.push(c.slice());
    // onto a facet from the centre, then 3e-9 beyond it (inside the slack of the neighbour's side)
    const k = Math.floor(rnd() * r.b.length);
    let s = r.b[k];
    for (let j = 0; j < n; j++) s -= r.A[k][j] * c[j];
    pts.push(c.map((x, j) => x + s * r.A[k][j]));
    pts.push(c.map((x, j) => x + (s + 3e-9) * r.A[k][j]));
  }
  return pts;
}

type Rule = 'first' | 'exact-first';

// the largest residual of region i at θ, literally (every row, no early stop)
function residual(t: TableFile, i: number, th: ArrayLike<number>): number {
  let worst = -Infinity;
  for (let k = 0; k < t.regions[i].b.length; k++) {
    let s = 0;
    for (let j = 0; j < th.length; j++) s += t.regions[i].A[k][j] * th[j];
    worst = Math.max(worst, s - t.regions[i].b[k]);
  }
  return worst;
}

// `locate` (with the residual it reports) and `locateAt` on packed points (with and without the
// residual) against the literal rule, at the slacks the index serves
function check(t: TableFile, index: BoxIndex, pts: number[][], rule: Rule): void {
  const n = t.dims.ntheta;
  const packed = new Float64Array(pts.length * n + 1);
  pts.forEach((p, k) => packed.set(p, 1 + k * n));
  for (const slack of [1e-8, 0, -1e-6])
    pts.forEach((p, k) => {
      const want = reference(t, p, slack, rule);
      expect(index.locate(p, slack), `θ = ${p}, slack ${slack}, ${rule}`).toBe(want);
      if (want >= 0) expect(index.lastViolation).toBe(residual(t, want, p));
      else expect(index.lastViolation).toBe(-Infinity);
      expect(index.locateAt(packed, 1 + k * n, slack, false), `locateAt θ = ${p}, slack ${slack}`).toBe(want);
      expect(index.locateAt(packed, 1 + k * n, slack), `locateAt θ = ${p}, slack ${slack}`).toBe(want);
    });
}

const boxesOf = (t: TableFile) => t.regions.map((r) => boundingBoxByLp(r.A, r.b, r.chebyshev.center, 0));

describe('BoxIndex: the k-d tree over bounding boxes of a finished table', () => {
  it('answers exactly as the literal rule on arrangements of random planes (2-D to 5-D)', () => {
    for (const [n, planes] of [
      [2, 14],
      [3, 9],
      [4, 7],
      [5, 6],
    ] as const) {
      const t = arrangementTable({ lower: Array(n).fill(-1), upper: Array(n).fill(1), planes, seed: 20 + n });
      const loc = tableLocator(t.regions, t.box.lower, t.box.upper);
      expect(loc.size).toBe(t.regions.length);
      const pts = probePoints(t, 1500, 7 * n);
      check(t, loc, pts, 'exact-first');
      check(t, new BoxIndex(t.regions, boxesOf(t), t.box.lower, t.box.upper, { rule: 'first' }), pts, 'first');
    }
  });

  it('index files: the bytes read back answer as the literal rule (3-D and 5-D, locate and locateAt); damaged or foreign bytes are reported, not read', () => {
    for (const [n, planes] of [
      [3, 9],
      [5, 6],
    ] as const) {
      const t = arrangementTable({ lower: Array(n).fill(-1), upper: Array(n).fill(1), planes, seed: 40 + n });
      const built = tableLocator(t.regions, t.box.lower, t.box.upper);
      const bytes = indexToBytes(built, { table: 'sha256:test', n });
      const read = indexFromBytes(bytes);
      if ('problem' in read) throw new Error(read.detail);
      expect(read.key).toEqual({ table: 'sha256:test', n });
      expect(read.index.size).toBe(t.regions.length);
      expect(read.index.stats).toEqual(built.stats);
      const pts = probePoints(t, 1500, 11 * n);
      check(t, read.index, pts, 'exact-first');
      const packed = Float64Array.from(pts.flat());
      pts.forEach((p, k) => expect(read.index.locateAt(packed, k * n, 1e-8, false), `θ=${p}`).toBe(reference(t, p, 1e-8, 'exact-first')));
      // written again from what was read: the same bytes
      expect(indexToBytes(read.index, { table: 'sha256:test', n })).toEqual(bytes);
      const cut = indexFromBytes(bytes.subarray(0, bytes.length - 9));
      expect('problem' in cut && cut.problem).toBe('damaged');
      const foreign = indexFromBytes(new TextEncoder().encode('{"format": "tessera-table"}\n'));
      expect('problem' in foreign && foreign.problem).toBe('tag');
      const later = bytes.slice();
      later[14] = 50; // "tessera-index 2"
      expect('problem' in indexFromBytes(later) && (indexFromBytes(later) as { problem: string }).problem).toBe('version');
    }
  });

  it('a grid of rectangles (many shared facets and corners) and tiny leaf/budget settings', () => {
    const t = gridTable(9, (i, j) => ({ F: [[i, j]], g: [i - j] }));
    const boxes = boxesOf(t);
    const pts = probePoints(t, 800, 3);
    for (const rule of ['first', 'exact-first'] as const)
      for (const options of [{}, { leafSize: 1, listingBudget: 2 }, { leafSize: 1, maxDepth: 3 }, { listingBudget: 1000 }]) {
        const loc = new BoxIndex(t.regions, boxes, t.box.lower, t.box.upper, { ...options, rule });
        check(t, loc, pts, rule);
      }
  });

  it('on a solved 4-D table (boom-4d-n8, first 400 regions, lean): same answers, far fewer region tests than a scan', () => {
    const s = solveProblem(loadProblem(join(import.meta.dirname, '..', 'fixtures', 'scale', 'boom-4d-n8.json')), { maxRegions: 400, lean: true });
    const t = s.table;
    const loc = tableLocator(t.regions, t.box.lower, t.box.upper);
    const pts = probePoints(t, 2000, 11);
    check(t, loc, pts, 'exact-first');
    check(t, new BoxIndex(t.regions, boxesOf(t), t.box.lower, t.box.upper, { rule: 'first' }), pts, 'first');
    // the tree of one evaluate run without an index file (a smaller listing budget): the same answers
    const oneRun = tableLocator(t.regions, t.box.lower, t.box.upper, undefined, true);
    expect(oneRun.stats.listings).toBeLessThan(loc.stats.listings);
    check(t, oneRun, pts, 'exact-first');
    // a query tests at most the regions its leaf lists
    let tests = 0;
    for (const p of pts) tests += loc.candidates(p);
    expect(loc.stats.cellRows).toBeLessThan(loc.stats.listings * Math.max(...t.regions.map((r) => r.b.length)));
    expect(tests / pts.length).toBeLessThan(0.1 * t.regions.length);
  }, 300000);

  // Reference: javascript-lp-solver (an npm simplex, through the thin adapter lpMaximizeReference)
  // maximising ±θ_j over each region's rows: the box of the index must hold that extent (a box too
  // small would lose points) and, unpadded, be no wider than it beyond the LPs' tolerances
  it('regionBoundingBox (rows with one entry, reused optimal bases, LPs) holds each region and is tight', () => {
    for (const [n, planes] of [
      [2, 14],
      [3, 9],
      [4, 7],
    ] as const) {
      const t = arrangementTable({ lower: Array(n).fill(-1), upper: Array(n).fill(1), planes, seed: 40 + n });
      for (const r of t.regions) {
        const box = regionBoundingBox(r.A, r.b, r.chebyshev.center, 0);
        const ref = referenceBox(r.A, r.b);
        expect(ref.optimal).toBe(true);
        for (let j = 0; j < n; j++) {
          expect(box.hi[j]).toBeGreaterThanOrEqual(ref.hi[j] - 1e-8); // the solver reports its result to ~1e-9
          expect(box.hi[j]).toBeLessThanOrEqual(ref.hi[j] + 1e-7);
          expect(box.lo[j]).toBeLessThanOrEqual(ref.lo[j] + 1e-8);
          expect(box.lo[j]).toBeGreaterThanOrEqual(ref.lo[j] - 1e-7);
        }
      }
    }
  });

  // Reference: the literal rule (`reference` above, a scan written here). A tree grown in parts
  // (the one-run tree of evaluate, whose parts the threads share) must answer as it whatever the
  // number of parts and the order they are grown in, and the slab masks of big leaves (locate4,
  // nθ ≤ 4) must keep every listing whose range holds θ: points are also put exactly on the sides
  // of listings' ranges (θ_j = a side, where the pretest still passes), the masks' edge case.
  it('a tree grown in parts (any number, any order; 2-D to 5-D) and the slab masks of big leaves answer as the literal rule, also on the sides of the listings\' ranges', () => {
    const tables: TableFile[] = [
      arrangementTable({ lower: [-1, -1, -1, -1], upper: [1, 1, 1, 1], planes: 7, seed: 61 }),
      arrangementTable({ lower: [-1, -1, -1], upper: [1, 1, 1], planes: 9, seed: 62 }),
      gridTable(9, (i, j) => ({ F: [[i, j]], g: [i - j] })),
      // 5-D: no slab masks (the general fast path), parts all the same
      arrangementTable({ lower: [-1, -1, -1, -1, -1], upper: [1, 1, 1, 1, 1], planes: 6, seed: 63 }),
    ];
    let slabLeaves = 0;
    let sidePoints = 0;
    for (const t of tables) {
      const n = t.dims.ntheta;
      const boxes = t.regions.map((r) => regionBoundingBox(r.A, r.b, r.chebyshev.center, 1e3 * 1e-9));
      const pts = probePoints(t, 600, 5 * n);
      for (const listingBudget of [1, 8])
        for (const parts of [1, 3, 32, 500]) {
          const options = { rule: 'exact-first' as const, listingBudget, parts };
          const plan = planTree(t.regions, boxes, t.box.lower, t.box.upper, options);
          const inOrder = joinTree(
            plan,
            plan.parts.map((p) => growPart(plan.ctx, p)),
          );
          // grown last part first, one grower for all: the same tree
          const grower = {};
          const backwards = plan.parts
            .map((_, k) => plan.parts.length - 1 - k)
            .map((k) => ({ k, tree: growPart(plan.ctx, plan.parts[k], grower) }))
            .sort((a, b) => a.k - b.k)
            .map((g) => g.tree);
          const other = joinTree(plan, backwards).state();
          const mine = inOrder.state();
          for (const key of Object.keys(mine) as (keyof typeof mine)[]) expect(other[key], `${key}, ${parts} parts`).toEqual(mine[key]);
          expect(new BoxIndex(t.regions, boxes, t.box.lower, t.box.upper, options).state().leafIds).toEqual(mine.leafIds);
          // the probes, and the same probes moved onto a side of a range their leaf lists
          const s = mine as unknown as { axis: Int32Array; split: Float64Array; left: Int32Array; leafFrom: Int32Array; leafTo: Int32Array; box4: Float64Array | null };
          const sides: number[][] = [];
          if (s.box4)
            for (const p of pts.slice(0, 300)) {
              let k = 0;
              while (s.axis[k] >= 0) k = p[s.axis[k]] <= s.split[k] ? s.left[k] : s.left[k] + 1;
              if (s.leafTo[k] - s.leafFrom[k] <= 4) continue;
              const q = s.leafFrom[k] + ((7 * sidePoints) % (s.leafTo[k] - s.leafFrom[k]));
              const j = sidePoints % n;
              for (const side of [s.box4[8 * q + 2 * j], s.box4[8 * q + 2 * j + 1]])
                if (side >= t.box.lower[j] && side <= t.box.upper[j]) sides.push(p.map((x, i) => (i === j ? side : x)));
              sidePoints++;
            }
          check(t, inOrder, [...pts, ...sides], 'exact-first');
          const slabs = (inOrder as unknown as { slabs: { of: Int32Array } | null }).slabs;
          if (slabs) slabLeaves += slabs.of.filter((r) => r >= 0).length;
        }
    }
    // the masks were used (big leaves) and their edge case probed
    expect(slabLeaves).toBeGreaterThan(50);
    expect(sidePoints).toBeGreaterThan(500);
  }, 300000);

  it('NaN and far-away θ are in no region', () => {
    const t = arrangementTable({ lower: [-1, -1, -1], upper: [1, 1, 1], planes: 6, seed: 5 });
    const loc = tableLocator(t.regions, t.box.lower, t.box.upper);
    expect(loc.locate([Number.NaN, 0, 0])).toBe(-1);
    expect(loc.locate([0, 0, Number.NaN])).toBe(-1);
    expect(loc.locate([5, 0, 0])).toBe(-1);
    expect(loc.locate([0, -7, 0])).toBe(-1);
  });
});
