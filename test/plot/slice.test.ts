import { describe, expect, it } from 'vitest';
import { join } from 'node:path';
import { polygonArea, polygonHull, randomLcg } from 'd3';
import { area, clipHalfPlane, rectangle, sharedEdgeLength, signedArea, type Point } from '../../src/partition/polygon.js';
import { liftPoint, makeSliceSpec, sliceHalfPlanes, type SliceSpec } from '../../src/partition/slice.js';
import { analyseSlice } from '../../src/check/gaps.js';
import { locateSequential, regionContains } from '../../src/table/table.js';
import { tol } from '../../src/tol.js';
import { lpFeasibleReference } from '../helpers/reference.js';
import { root, solved } from '../helpers/solved.js';

describe('polygon primitives', () => {
  it('signed area equals d3-polygon (shoelace, screen orientation) with the sign flipped, on 200 random hulls', () => {
    const rnd = randomLcg(21);
    for (let t = 0; t < 200; t++) {
      const pts: Point[] = Array.from({ length: 3 + Math.floor(rnd() * 12) }, () => [rnd() * 10 - 5, rnd() * 10 - 5]);
      const h = polygonHull(pts)!;
      expect(signedArea(h)).toBeCloseTo(-polygonArea(h), 10);
    }
  });
  it('clipping the unit square by x + y ≤ 1 leaves the triangle of area 1/2 (closed form)', () => {
    const tri = clipHalfPlane(rectangle(0, 1, 0, 1), { a: [Math.SQRT1_2, Math.SQRT1_2], c: Math.SQRT1_2 });
    expect(tri.length).toBe(3);
    expect(area(tri)).toBeCloseTo(0.5, 14);
  });
  it('two unit squares side by side share an edge of length 1; corner-touching ones share 0', () => {
    expect(sharedEdgeLength(rectangle(0, 1, 0, 1), rectangle(1, 2, 0.5, 3), 1e-12)).toBeCloseTo(0.5, 14);
    expect(sharedEdgeLength(rectangle(0, 1, 0, 1), rectangle(1, 2, 1, 2), 1e-12)).toBe(0);
  });
});

const cases: { file: string; axes: [number, number]; fix: [number, number][] }[] = [
  { file: 'positioning-axis.yaml', axes: [0, 1], fix: [] },
  { file: 'valve-actuator.json', axes: [0, 1], fix: [[2, 0.05]] },
  { file: 'valve-actuator.json', axes: [1, 2], fix: [[0, -0.3]] },
];

describe.each(cases)('slices of $file, axes $axes', ({ file, axes, fix }) => {
  const s = solved(join(root, 'examples', file));
  const spec: SliceSpec = makeSliceSpec(s.table.box, axes, new Map(fix));
  const sl = analyseSlice(s.table, s.mpqp, spec);

  it('has polygons, and their areas add up to the covered area of the slice (rectangle minus complement)', () => {
    expect(sl.polygons.length).toBeGreaterThan(5);
    const sum = sl.polygons.reduce((a, p) => a + p.area, 0);
    expect(sum).toBeCloseTo(sl.gaps.areas.rect - sl.gaps.areas.uncovered, 9);
    expect(sl.gaps.areas.uncovered).toBeCloseTo(sl.gaps.areas.holes + sl.gaps.areas.infeasible, 9);
  });

  it('covered area agrees with a seeded Monte Carlo estimate within 4 standard errors (common practice)', () => {
    const rnd = randomLcg(97);
    const N = 6000;
    let hit = 0;
    const { x0, x1, y0, y1 } = spec.rect;
    for (let t = 0; t < N; t++) {
      const th = liftPoint(spec, x0 + (x1 - x0) * rnd(), y0 + (y1 - y0) * rnd());
      if (locateSequential(s.table.regions, th) >= 0) hit++;
    }
    const p = sl.gaps.areas.covered / sl.gaps.areas.rect;
    const se = Math.sqrt((p * (1 - p)) / N);
    expect(Math.abs(hit / N - p)).toBeLessThan(4 * se + 1 / N);
  });

  it('every polygon vertex satisfies all region rows and lies on at least two of its lines (rows or slice edges)', () => {
    const eps = 1e-7;
    for (const p of sl.polygons) {
      const hs = sliceHalfPlanes(s.table.regions[p.index].A, s.table.regions[p.index].b, spec)!;
      const { x0, x1, y0, y1 } = spec.rect;
      for (const [x, y] of p.polygon) {
        const slack = hs.map((h) => h.c - (h.a[0] * x + h.a[1] * y));
        expect(Math.min(...slack)).toBeGreaterThan(-eps);
        const onRect = [x - x0, x1 - x, y - y0, y1 - y].filter((d) => Math.abs(d) < eps).length;
        const onRows = slack.filter((d) => Math.abs(d) < eps).length;
        expect(onRect + onRows).toBeGreaterThanOrEqual(2);
        // the same vertex in full θ is inside the region (the region's own membership test)
        expect(regionContains(s.table.regions[p.index], liftPoint(spec, x, y), 1e-7)).toBe(true);
      }
    }
  });

  it('adjacent polygons share edges: where the far side of an edge is covered, other polygons cover the whole edge', () => {
    const scale = Math.max(spec.rect.x1 - spec.rect.x0, spec.rect.y1 - spec.rect.y0);
    let checked = 0;
    for (const p of sl.polygons) {
      const P = p.polygon;
      for (let k = 0; k < P.length; k++) {
        const u = P[k];
        const v = P[(k + 1) % P.length];
        const len = Math.hypot(v[0] - u[0], v[1] - u[1]);
        if (len < 1e-4 * scale) continue;
        const nx = (v[1] - u[1]) / len;
        const ny = -(v[0] - u[0]) / len;
        const sgn = signedArea(P) > 0 ? 1 : -1; // outward normal for either orientation
        const mx = (u[0] + v[0]) / 2 + sgn * nx * 1e-6 * scale;
        const my = (u[1] + v[1]) / 2 + sgn * ny * 1e-6 * scale;
        if (mx < spec.rect.x0 || mx > spec.rect.x1 || my < spec.rect.y0 || my > spec.rect.y1) continue;
        if (locateSequential(s.table.regions, liftPoint(spec, mx, my)) < 0) continue;
        const shared = sl.polygons.filter((q) => q !== p).reduce((a, q) => a + sharedEdgeLength([u, v], q.polygon, 1e-7 * scale), 0);
        // a two-point "polygon" [u, v] counts its segment twice (u→v and v→u)
        expect(shared / 2).toBeCloseTo(len, 5);
        checked++;
      }
    }
    expect(checked).toBeGreaterThan(10);
  });

  it('infeasible pieces are infeasible and polygons feasible, by javascript-lp-solver at interior points', () => {
    const probe = (poly: Point[]) => {
      const [cx, cy] = poly.reduce((a, q) => [a[0] + q[0] / poly.length, a[1] + q[1] / poly.length], [0, 0]);
      return liftPoint(spec, cx, cy);
    };
    let n = 0;
    for (const q of sl.gaps.infeasible) {
      if (area(q) < 1e-6 * sl.gaps.areas.rect) continue;
      expect(lpFeasibleReference(s.mpqp, probe(q))).toBe(false);
      n++;
    }
    for (const p of sl.polygons.slice(0, 40)) expect(lpFeasibleReference(s.mpqp, probe(p.polygon))).toBe(true);
    expect(n + sl.polygons.length).toBeGreaterThan(0);
    expect(sl.gaps.areas.holes).toBeLessThan(tol.radius);
  });
});
