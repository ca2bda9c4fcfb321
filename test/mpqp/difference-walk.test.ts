/**
 * The LP difference of a facet and its slices (`uncoveredPoint`, the exploration's fallback when a
 * facet's vertex list fails a check), walked again after every slice appended, as the exploration
 * calls it. References: elementary geometry (a point at distance ≥ r from every unit-normal
 * half-space it violates, and inside the facet by r, is the centre of an uncovered ball of radius r),
 * and a dense grid of the facet for "nothing uncovered" (common practice: a ball of radius δ
 * outside a slice's half-space contains no point of it).
 */
import { describe, expect, it } from 'vitest';
import { DIFFERENCE_LPS, slicePolytope, uncoveredPoint, type DifferenceWalk, type FacetFrame, type Slice } from '../../src/mpqp/solve.js';
import { rng } from '../helpers/solved.js';

/** The face x3 = 1 of the box [0, 1] × [0, 1] × [0, 1], as the exploration frames a facet. */
function cubeFace(): FacetFrame {
  const A = [
    [1, 0, 0],
    [-1, 0, 0],
    [0, 1, 0],
    [0, -1, 0],
    [0, 0, 1],
    [0, 0, -1],
  ];
  const b = [1, 0, 1, 0, 1, 0];
  return slicePolytope(A, b, A[4], b[4], 4, 0)!;
}

/** max over rows of (a·y − b)/‖a‖: how far y is outside the polytope (≤ 0 inside). */
function outside(s: Slice, y: ArrayLike<number>, dim: number): number {
  let worst = -Infinity;
  for (let i = 0; i < s.m; i++) {
    let v = -s.b[i];
    let n = 0;
    for (let k = 0; k < dim; k++) {
      v += s.A[i * dim + k] * y[k];
      n += s.A[i * dim + k] ** 2;
    }
    worst = Math.max(worst, v / Math.sqrt(n));
  }
  return worst;
}

const minRadius = 1e-3;

describe('difference walk of a facet, resumed after every slice appended', () => {
  for (const seed of [3, 11, 29]) {
    it(`seed ${seed}: each answer is the fresh walk's, its ball uncovered; at the end no grid point has an uncovered ball`, () => {
      const frame = cubeFace();
      const dim = frame.dim;
      expect(dim).toBe(2);
      const r = rng(seed);
      const cover: Slice[] = [];
      const walk: DifferenceWalk = {};
      const lp = { lps: 0, reference: false };
      let calls = 0;
      for (;;) {
        const got = uncoveredPoint(frame, cover, minRadius, lp, walk);
        const fresh = uncoveredPoint(frame, cover, minRadius, { lps: 0, reference: false });
        calls++;
        expect(got === null ? null : typeof got === 'string' ? got : [Array.from(got.point), got.radius]).toEqual(
          fresh === null ? null : typeof fresh === 'string' ? fresh : [Array.from(fresh.point), fresh.radius],
        );
        if (got === null) break;
        if (typeof got === 'string') throw new Error(got);
        // the ball is inside the facet and outside every slice (elementary geometry)
        expect(outside(frame, got.point, dim)).toBeLessThanOrEqual(-got.radius + 1e-9);
        for (const s of cover) expect(outside(s, got.point, dim)).toBeGreaterThanOrEqual(got.radius - 1e-9);
        expect(got.radius).toBeGreaterThan(minRadius);
        // as the exploration does: a slice over the piece found (a landing's), or elsewhere at random
        const y = r() < 0.7 ? Array.from(got.point) : frame.vertices()!.reduce((p, v) => p.map((x, k) => x + v[k] * r() * 0.5), [0, 0]);
        const h = (r() < 0.7 ? got.radius : 0.05 + 0.2 * r()) * (1 + r());
        cover.push(frame.ballSlice(y, h));
        expect(calls).toBeLessThan(2000);
      }
      expect(calls).toBeGreaterThan(5);
      // nothing uncovered: no grid point of the facet holds a ball of radius 2·minRadius that is
      // inside the facet and outside every slice
      const V = frame.vertices()!;
      const lo = [0, 1].map((k) => Math.min(...V.map((v) => v[k])));
      const hi = [0, 1].map((k) => Math.max(...V.map((v) => v[k])));
      const n = 300;
      let free = 0;
      for (let i = 0; i <= n; i++)
        for (let j = 0; j <= n; j++) {
          const y = [lo[0] + ((hi[0] - lo[0]) * i) / n, lo[1] + ((hi[1] - lo[1]) * j) / n];
          if (outside(frame, y, dim) > -2 * minRadius) continue;
          if (cover.every((s) => outside(s, y, dim) >= 2 * minRadius)) free++;
        }
      expect(free).toBe(0);
    });
  }

  it('the walk stops at its LP budget and when asked to, and the walk resumed keeps its count', () => {
    const frame = cubeFace();
    // the facet tiled by 12 × 12 boxes but its last tile: the walk must go through the others first
    const V = frame.vertices()!;
    const lo = [0, 1].map((k) => Math.min(...V.map((v) => v[k])));
    const hi = [0, 1].map((k) => Math.max(...V.map((v) => v[k])));
    const cover: Slice[] = [];
    for (let i = 0; i < 12; i++)
      for (let j = 0; j < 12; j++) {
        if (i === 11 && j === 11) continue;
        const c = [lo[0] + ((hi[0] - lo[0]) * (i + 0.5)) / 12, lo[1] + ((hi[1] - lo[1]) * (j + 0.5)) / 12];
        cover.push(frame.ballSlice(c, (0.6 * Math.SQRT2 * (hi[0] - lo[0])) / 12));
      }
    const lp = { lps: 0, reference: false };
    const unbounded = uncoveredPoint(frame, cover, minRadius, lp);
    expect(typeof unbounded).toBe('object');
    const needed = lp.lps;
    expect(needed).toBeGreaterThan(100);
    const tight: DifferenceWalk = { budget: 10 };
    expect(uncoveredPoint(frame, cover, minRadius, { lps: 0, reference: false }, tight)).toBe('budget');
    expect(tight.lps).toBe(11);
    const asked: DifferenceWalk = { stop: () => true };
    expect(uncoveredPoint(frame, cover, minRadius, { lps: 0, reference: false }, asked)).toBe('stopped');
    expect(asked.lps).toBe(64);
    expect(DIFFERENCE_LPS).toBeGreaterThan(needed);
  });
});
