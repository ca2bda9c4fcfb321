import { describe, it, expect } from 'vitest';
import { join } from 'node:path';
import { farkasBound, parallelBound, prefilterScratch } from '../../src/mpqp/prefilter.js';
import { buildRegion, type LpEngine } from '../../src/mpqp/region.js';
import { lpMaximizeReference } from '../../src/lp/reference.js';
import { solvePartition } from '../../src/mpqp/solve.js';
import { buildMpqp } from '../../src/formulation/index.js';
import { loadProblem } from '../../src/problem/index.js';
import { rng } from '../problem/rng.js';
import { root } from '../helpers/solved.js';

// The LP-free redundancy proofs of the region builder. References: hand-worked polytopes (weak LP
// duality, common practice) and javascript-lp-solver (an independent simplex from npm, through
// lpMaximizeReference, which rounds to about 1e-8) for the maxima the proofs bound.

const F = (xs: number[]) => Float64Array.from(xs);

describe('parallelBound and farkasBound on the square [-1, 1]² (hand-worked, common practice)', () => {
  // rows: x ≤ 1, y ≤ 1, −x ≤ 1, −y ≤ 1
  const A = F([1, 0, 0, 1, -1, 0, 0, -1]);
  const b = F([1, 1, 1, 1]);
  const lo = F([-1, -1]);
  const hi = F([1, 1]);
  const s = prefilterScratch(2);
  it('x + y: 1·(x ≤ 1) + 1·(y ≤ 1) gives max 2, so x + y ≤ 2 is implied and x + y ≤ 1.5 is not', () => {
    expect(farkasBound(F([1, 1]), A, b, [0, 1], 2, lo, hi, s)).toBeCloseTo(2, 14);
  });
  it('x − y is not in the cone of the normals of x ≤ 1, y ≤ 1: no proof (+∞)', () => {
    expect(farkasBound(F([1, -1]), A, b, [0, 1], 2, lo, hi, s)).toBe(Infinity);
  });
  it('x − y from x ≤ 1 and −y ≤ 1: max 2 at (1, −1)', () => {
    expect(farkasBound(F([1, -1]), A, b, [0, 3], 2, lo, hi, s)).toBeCloseTo(2, 14);
  });
  it('two parallel normals cannot form a basis: +∞', () => {
    expect(farkasBound(F([1, 0]), A, b, [0, 2], 2, lo, hi, s)).toBe(Infinity);
  });
  it('x + 1e-4·y next to x ≤ 1: bound 1 + 1e-4 over the box', () => {
    expect(parallelBound(F([1, 1e-4]), A, b, 0, 2, lo, hi)).toBeCloseTo(1.0001, 14);
    // the same row slightly tilted the other way is bounded the same way: |e|·|y| ≤ 1e-4
    expect(parallelBound(F([1, -1e-4]), A, b, 0, 2, lo, hi)).toBeCloseTo(1.0001, 14);
  });
});

describe('farkasBound vs javascript-lp-solver on seeded random polytopes in 3-D to 6-D', () => {
  it('a finite bound is never below the true maximum, and equals it for an objective in the cone of a feasible basis', () => {
    const r = rng(20261202);
    let proofs = 0;
    let tight = 0;
    for (let trial = 0; trial < 240; trial++) {
      const n = 3 + (trial % 4);
      const m = 2 * n + 3;
      // rows a_i·θ ≤ b_i with θ = 0 strictly inside; the box [−3, 3]ⁿ
      const A = new Float64Array(m * n);
      const b = new Float64Array(m);
      for (let i = 0; i < m; i++) {
        let nn = 0;
        for (let j = 0; j < n; j++) nn += (A[i * n + j] = 2 * r() - 1) ** 2;
        nn = Math.sqrt(nn);
        for (let j = 0; j < n; j++) A[i * n + j] /= nn;
        b[i] = 0.2 + r();
      }
      const lo = new Float64Array(n).fill(-3);
      const hi = new Float64Array(n).fill(3);
      const W = Array.from({ length: n }, (_, i) => (i * 2 + trial) % m);
      // the reference polytope {A_W θ ≤ b_W} ∩ box, in the reference's contract
      const rows: number[] = [];
      const rhs: number[] = [];
      for (const w of W) {
        for (let j = 0; j < n; j++) rows.push(A[w * n + j]);
        rhs.push(b[w]);
      }
      for (let j = 0; j < n; j++) {
        for (let k = 0; k < n; k++) rows.push(k === j ? 1 : 0);
        rhs.push(hi[j]);
        for (let k = 0; k < n; k++) rows.push(k === j ? -1 : 0);
        rhs.push(-lo[j]);
      }
      const refMax = (c: Float64Array) => lpMaximizeReference(c, F(rows), F(rhs), n + 2 * n, n);
      // objective 1: inside the cone of W (positive weights): the bound is the vertex value
      const y = Array.from({ length: n }, () => 0.1 + r());
      const c = new Float64Array(n);
      for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) c[j] += y[i] * A[W[i] * n + j];
      const bound = farkasBound(c, A, b, W, n, lo, hi, prefilterScratch(n));
      const ref = refMax(c);
      expect(ref.status).toBe('optimal');
      expect(bound).toBeLessThan(Infinity);
      expect(bound).toBeGreaterThanOrEqual(ref.value - 1e-7 * (1 + Math.abs(ref.value)));
      proofs++;
      // the vertex of W inside the box: then it is the maximiser and the bound is exact
      const inBox = Array.from(ref.x).every((v) => v < 2.999 && v > -2.999);
      if (inBox) {
        expect(Math.abs(bound - ref.value)).toBeLessThanOrEqual(1e-7 * (1 + Math.abs(ref.value)));
        tight++;
      }
      // objective 2: random; whenever a bound comes back it must hold
      const c2 = Float64Array.from({ length: n }, () => 2 * r() - 1);
      const b2 = farkasBound(c2, A, b, W, n, lo, hi, prefilterScratch(n));
      if (b2 < Infinity) {
        const ref2 = refMax(c2);
        expect(b2).toBeGreaterThanOrEqual(ref2.value - 1e-7 * (1 + Math.abs(ref2.value)));
        proofs++;
      }
    }
    expect(proofs).toBeGreaterThan(240);
    expect(tight).toBeGreaterThan(40);
  });

  it('parallelBound is never below the true maximum over the row it leans on and the box', () => {
    const r = rng(7);
    for (let trial = 0; trial < 200; trial++) {
      const n = 3 + (trial % 4);
      const q = Float64Array.from({ length: n }, () => 2 * r() - 1);
      const a = Float64Array.from(q, (v) => v + 1e-3 * (2 * r() - 1));
      const bq = 0.5 + r();
      const lo = Float64Array.from({ length: n }, () => -1 - r());
      const hi = Float64Array.from({ length: n }, () => 1 + r());
      const rows = [...q];
      const rhs = [bq];
      for (let j = 0; j < n; j++) {
        for (let k = 0; k < n; k++) rows.push(k === j ? 1 : 0);
        rhs.push(hi[j]);
        for (let k = 0; k < n; k++) rows.push(k === j ? -1 : 0);
        rhs.push(-lo[j]);
      }
      const ref = lpMaximizeReference(a, F(rows), F(rhs), 1 + 2 * n, n);
      const bound = parallelBound(a, q, F([bq]), 0, n, lo, hi);
      expect(bound).toBeGreaterThanOrEqual(ref.value - 1e-7 * (1 + Math.abs(ref.value)));
    }
  });
});

describe('buildRegion: the proofs keep exactly the rows the javascript-lp-solver path keeps', () => {
  // `lp.reference` runs every redundancy LP on javascript-lp-solver and no LP-free proof; the kernel
  // path with the proofs must give the same rows, kinds and Chebyshev radius, with fewer LPs.
  for (const [name, max] of [
    ['boom-4d-n8', 60],
    ['mixer-5d-n10', 30],
  ] as const) {
    it(`${name}: the first ${max} regions rebuilt both ways`, () => {
      const mpqp = buildMpqp(loadProblem(join(root, 'test', 'fixtures', 'scale', `${name}.json`)));
      const part = solvePartition(mpqp, { maxRegions: max });
      expect(part.regions.length).toBe(max);
      const fast: LpEngine = { lps: 0, reference: false };
      const ref: LpEngine = { lps: 0, reference: true };
      for (const R of part.regions) {
        const a = buildRegion(mpqp, R.activeSet, fast);
        const b = buildRegion(mpqp, R.activeSet, ref);
        expect(a.ok && b.ok).toBe(true);
        if (!a.ok || !b.ok) continue;
        expect(a.region.facets.map((f) => `${f.kind}${f.row}`), `facets of [${R.activeSet}]`).toEqual(b.region.facets.map((f) => `${f.kind}${f.row}`));
        expect(a.region.b.length).toBe(b.region.b.length);
        // both boxes hold the region: every facet's vertex-free check, the Chebyshev centre inside both
        for (let j = 0; j < mpqp.ntheta; j++) {
          const cj = a.region.chebyshev.center[j];
          expect(cj).toBeGreaterThanOrEqual(a.bbox.lo[j]);
          expect(cj).toBeLessThanOrEqual(a.bbox.hi[j]);
          expect(Math.abs(a.bbox.lo[j] - b.bbox.lo[j])).toBeLessThan(1e-6);
          expect(Math.abs(a.bbox.hi[j] - b.bbox.hi[j])).toBeLessThan(1e-6);
        }
      }
      // the proofs replace LPs: strictly fewer per region than the all-LP path
      expect(fast.lps).toBeLessThan(0.75 * ref.lps);
    });
  }
});
