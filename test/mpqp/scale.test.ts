import { describe, it, expect, vi } from 'vitest';

vi.setConfig({ testTimeout: 180_000 }); // solves every example and fixture; the machine may be loaded
import { basename, join } from 'node:path';
import { exampleFiles, fixtureFiles, solved, rng, randomInBox, root } from '../helpers/solved.js';
import { qpReference } from '../helpers/reference.js';
import { lpMaximizeReference } from '../../src/lp/reference.js';
import { GridLocator, boundingBoxByLp, locateRegion } from '../../src/table/locator.js';
import { solvePointQp } from '../../src/mpqp/pointqp.js';
import { solvePartition } from '../../src/mpqp/solve.js';
import { loadProblem } from '../../src/problem/index.js';
import { buildMpqp } from '../../src/formulation/index.js';
import type { CriticalRegion } from '../../src/mpqp/types.js';

/**
 * The location rule, written out here: the lowest index whose every row holds exactly (residual ≤
 * 0); when none, the least largest residual within slack, lowest index on ties (common practice:
 * containment first, tolerance only as a fallback).
 */
function firstHolding(regions: Pick<CriticalRegion, 'A' | 'b'>[], th: ArrayLike<number>, slack: number): number {
  const worst = regions.map((R) => Math.max(-Infinity, ...R.A.map((a, r) => a.reduce((s, v, j) => s + v * th[j], 0) - R.b[r])));
  const exact = worst.findIndex((v) => v <= 0);
  if (exact >= 0) return exact;
  let best = -1;
  worst.forEach((v, i) => {
    if (v <= slack && (best < 0 || v < worst[best])) best = i;
  });
  return best;
}

const files = [...exampleFiles, ...fixtureFiles];

describe('grid locator', () => {
  it('answers the region the location rule names (exact containment first, then least residual within slack), on every example and fixture', () => {
    for (const file of files) {
      const { table, mpqp } = solved(file);
      const rnd = rng(7001 + basename(file).length);
      const regs = table.regions;
      const pts: number[][] = [];
      for (let k = 0; k < 1500; k++) pts.push(randomInBox(mpqp.box, rnd));
      // points on shared facets and just outside the box as well
      for (const R of regs.slice(0, 200)) {
        const c = R.chebyshev.center;
        R.A.forEach((a, f) => {
          const t = R.b[f] - a.reduce((s, v, j) => s + v * c[j], 0);
          pts.push(c.map((v, j) => v + t * a[j]));
        });
      }
      pts.push(Array.from(mpqp.box.upper, (u) => u + 1e-3), [NaN, ...Array.from(mpqp.box.lower).slice(1)]);
      let hits = 0;
      for (const p of pts) {
        const want = firstHolding(regs, p, 1e-8);
        expect(locateRegion(regs, p, 1e-8, table.box), `${basename(file)} θ=${p}`).toBe(want);
        if (want >= 0) hits++;
      }
      expect(hits).toBeGreaterThan(pts.length / 4);
    }
  });

  it('bounding boxes by LP match javascript-lp-solver', () => {
    const { table } = solved(fixtureFiles.find((f) => f.includes('two-carts'))!);
    for (const R of table.regions.slice(0, 25)) {
      const box = boundingBoxByLp(R.A, R.b, R.chebyshev.center, 0);
      const n = R.A[0].length;
      const A = Float64Array.from(R.A.flat());
      const b = Float64Array.from(R.b);
      for (let j = 0; j < n; j++) {
        const c = new Float64Array(n);
        c[j] = 1;
        // javascript-lp-solver: an independent simplex implementation
        expect(box.hi[j]).toBeCloseTo(lpMaximizeReference(c, A, b, b.length, n).value, 6);
        c[j] = -1;
        expect(box.lo[j]).toBeCloseTo(-lpMaximizeReference(c, A, b, b.length, n).value, 6);
      }
    }
  });

  it('keeps lists short: a query tests few regions on a 4-D table', () => {
    const { table } = solved(fixtureFiles.find((f) => f.includes('two-carts'))!);
    const g = new GridLocator(table.box.lower, table.box.upper);
    for (const R of table.regions) {
      const bb = boundingBoxByLp(R.A, R.b, R.chebyshev.center, 1e-9);
      g.add(R.A, R.b, bb.lo, bb.hi);
    }
    expect(g.size).toBe(table.regions.length);
    const rnd = rng(99);
    for (let k = 0; k < 500; k++) {
      const p = randomInBox({ lower: Float64Array.from(table.box.lower), upper: Float64Array.from(table.box.upper) }, rnd);
      expect(g.locate(p, 1e-8)).toBe(firstHolding(table.regions, p, 1e-8));
    }
  });
});

describe('warm-started point QP', () => {
  it('reaches the quadprog optimum from any region working set', () => {
    for (const file of files) {
      const { table, mpqp } = solved(file);
      const rnd = rng(31 + basename(file).length);
      for (let k = 0; k < 150; k++) {
        const th = randomInBox(mpqp.box, rnd);
        const start = table.regions[Math.floor(rnd() * table.regions.length)].activeSet;
        const warm = solvePointQp(mpqp, th, start);
        const ref = qpReference(mpqp, th); // quadprog: Goldfarb–Idnani, an independent implementation
        expect(warm.feasible, `${basename(file)} θ=${th}`).toBe(ref.feasible);
        if (!ref.feasible) continue;
        for (let i = 0; i < mpqp.nz; i++) expect(Math.abs(warm.z[i] - ref.z[i])).toBeLessThan(1e-6);
      }
    }
  });
});

describe('facet crossing strategies', () => {
  const file = fixtureFiles.find((f) => f.includes('two-carts'))!;
  it('the guessed-neighbour exploration finds the same regions as point QPs alone, with fewer QPs', () => {
    const mpqp = buildMpqp(loadProblem(file));
    const plain = solvePartition(mpqp, { strategy: { guess: false, warmStart: false } });
    const fast = solvePartition(mpqp);
    expect(fast.stats.complete && plain.stats.complete).toBe(true);
    expect(fast.stats.unresolvedPieces).toBe(0);
    expect(plain.stats.unresolvedPieces).toBe(0);
    // same pieces of the parameter space: every seeded point gets the same law from both
    const rnd = rng(4242);
    let inside = 0;
    for (let k = 0; k < 3000; k++) {
      const th = randomInBox(mpqp.box, rnd);
      const a = firstHolding(fast.regions, th, 1e-8);
      const b = firstHolding(plain.regions, th, 1e-8);
      expect(a < 0, `θ=${th}`).toBe(b < 0);
      if (a < 0) continue;
      inside++;
      const ua = fast.regions[a].law.F[0].reduce((s, v, j) => s + v * th[j], fast.regions[a].law.g[0]);
      const ub = plain.regions[b].law.F[0].reduce((s, v, j) => s + v * th[j], plain.regions[b].law.g[0]);
      expect(Math.abs(ua - ub)).toBeLessThan(1e-6);
    }
    expect(inside).toBeGreaterThan(300);
    expect(new Set(fast.regions.map((r) => r.activeSet.join(','))).size).toBe(fast.regions.length);
    expect(fast.stats.qps).toBeLessThan(plain.stats.qps);
    expect(fast.work!.guessHits).toBeGreaterThan(0.5 * fast.regions.length);
  });

  it('a 4-D bench problem needs fewer than 40 LPs and at most 1.5 candidates per region', () => {
    const mpqp = buildMpqp(loadProblem(join(root, 'test', 'fixtures', 'scale', 'boom-4d-n8.json')));
    const p = solvePartition(mpqp, { maxRegions: 600 });
    expect(p.stats.regions).toBe(600);
    expect(p.stats.lps / p.stats.regions).toBeLessThan(40);
    expect(p.stats.candidates / p.stats.regions).toBeLessThanOrEqual(1.5);
  });
});
