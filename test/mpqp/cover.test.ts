import { describe, it, expect } from 'vitest';
import { clipPiece, facetPiece, lastCoverFailure, pieceCentre, pieceFromVertices, pieceTight, pieceVertex, polytopePiece, subtractSlice, type CoverContext, type CoverPiece } from '../../src/mpqp/cover.js';
import { boxVertices, cutVertices, vertexTight, vertexX } from '../../src/mpqp/vertices.js';
import { lpMaximizeReference } from '../../src/lp/reference.js';
import { rng } from '../problem/rng.js';

// References: javascript-lp-solver (an npm simplex, through the thin adapter lpMaximizeReference)
// for every LP fact below (support values, Chebyshev radii, emptiness); hand-worked polytopes are
// marked "common practice". The code under test (src/mpqp/cover.ts) solves no LP at all.

const ctx = (dim: number): CoverContext => ({ dim, eps: 1e-9, maxVerts: 4000 });
const piece = (A: number[][], b: number[], box = 10): CoverPiece => {
  const dim = A[0].length;
  const r = polytopePiece(Float64Array.from(A.flat()), Float64Array.from(b), b.length, new Array(dim).fill(-box), new Array(dim).fill(box), ctx(dim));
  if (!r || r === 'fail') throw new Error(`no piece: ${r}`);
  return r;
};
/** P's vertices as one array each (the piece keeps them flat, dim = x.length / nv) */
const vertsOf = (P: CoverPiece): number[][] => Array.from({ length: P.nv }, (_, v) => pieceVertex(P, P.x.length / P.nv, v));
/** flat vertex input for pieceFromVertices from one array per vertex */
const flatVerts = (verts: number[][], tight: number[][]): [number, Float64Array, Int32Array, Int32Array] => {
  const tOff = new Int32Array(verts.length + 1);
  tight.forEach((t, v) => (tOff[v + 1] = tOff[v] + t.length));
  return [verts.length, Float64Array.from(verts.flat()), tOff, Int32Array.from(tight.flat())];
};
const sortedVerts = (P: CoverPiece): number[][] => vertsOf(P).map((v) => Array.from(v, (x) => Math.round(x * 1e9) / 1e9 + 0)).sort((x, y) => x[0] - y[0] || x[1] - y[1] || (x[2] ?? 0) - (y[2] ?? 0));
const unit = (a: number[]): number[] => {
  const n = Math.hypot(...a);
  return a.map((x) => x / n);
};

/** max c·y over {A y ≤ b} by javascript-lp-solver; −Infinity when infeasible. */
function support(A: number[][], b: number[], c: number[]): number {
  const r = lpMaximizeReference(c, A.flat(), b, b.length, c.length);
  return r.status === 'optimal' ? r.value : r.status === 'infeasible' ? -Infinity : Infinity;
}
/** Chebyshev radius of {A y ≤ b} by javascript-lp-solver (max ρ, a y + ‖a‖ρ ≤ b, ρ ≤ 1e3). */
function chebRadius(A: number[][], b: number[]): number {
  const dim = A[0].length;
  const A1 = A.map((a) => [...a, Math.hypot(...a)]);
  A1.push([...new Array(dim).fill(0), 1]);
  const r = lpMaximizeReference([...new Array(dim).fill(0), 1], A1.flat(), [...b, 1e3], b.length + 1, dim + 1);
  return r.status === 'optimal' ? r.value : -Infinity;
}
const rowsOf = (P: CoverPiece): { A: number[][]; b: number[] } => {
  const d = P.x.length / P.nv;
  return { A: Array.from({ length: P.m }, (_, i) => Array.from(P.A.slice(i * d, (i + 1) * d))), b: Array.from(P.b) };
};

describe('vertex lists of hand-worked polytopes (common practice)', () => {
  it('unit square cut by x + y ≤ 1 is the triangle (0,0), (1,0), (0,1)', () => {
    const P = piece([[1, 0], [-1, 0], [0, 1], [0, -1], unit([1, 1])], [1, 0, 1, 0, 1 / Math.SQRT2]);
    expect(sortedVerts(P)).toEqual([[0, 0], [0, 1], [1, 0]]);
    expect(P.m).toBe(3); // x ≤ 1 and y ≤ 1 touch only at one vertex each: not facets
  });
  it('unit cube with the corner x + y + z ≥ 2.5 cut off has 7 + 3 vertices', () => {
    const cube = [[1, 0, 0], [-1, 0, 0], [0, 1, 0], [0, -1, 0], [0, 0, 1], [0, 0, -1]];
    const P = piece([...cube, unit([1, 1, 1])], [1, 0, 1, 0, 1, 0, 2.5 / Math.sqrt(3)]);
    // the cut meets the three edges at (1,1,z) etc. with z = 0.5
    expect(P.nv).toBe(10);
    expect(sortedVerts(P)).toContainEqual([0.5, 1, 1]);
    expect(sortedVerts(P)).toContainEqual([1, 1, 0.5]);
    expect(sortedVerts(P)).not.toContainEqual([1, 1, 1]);
  });
  it('a square pyramid (degenerate apex: four facets meet) keeps its apex once', () => {
    const A = [[0, 0, -1], unit([1, 0, 1]), unit([-1, 0, 1]), unit([0, 1, 1]), unit([0, -1, 1])];
    const b = [0, 1 / Math.SQRT2, 1 / Math.SQRT2, 1 / Math.SQRT2, 1 / Math.SQRT2];
    const P = piece(A, b);
    expect(sortedVerts(P)).toEqual([[-1, -1, 0], [-1, 1, 0], [0, 0, 1], [1, -1, 0], [1, 1, 0]]);
    expect(pieceTight(P, vertsOf(P).findIndex((v) => Math.abs(v[2] - 1) < 1e-9)).length).toBe(4);
  });
  it('the square minus the disc-free slice [0.5, 2] × [−1, 2] is the strip x ≤ 0.5 (common practice)', () => {
    const sq = piece([[1, 0], [-1, 0], [0, 1], [0, -1]], [1, 0, 1, 0]);
    const dropped = { count: 0 };
    const r = subtractSlice(sq, Float64Array.from([-1, 0, 1, 0, 0, 1, 0, -1]), Float64Array.from([-0.5, 2, 2, 1]), 4, 1e-6, ctx(2), dropped);
    expect(Array.isArray(r)).toBe(true);
    const pieces = r as CoverPiece[];
    expect(pieces.length).toBe(1);
    expect(sortedVerts(pieces[0])).toEqual([[0, 0], [0, 1], [0.5, 0], [0.5, 1]]);
    // covered entirely / missed entirely
    expect(subtractSlice(sq, Float64Array.from([1, 0, -1, 0, 0, 1, 0, -1]), Float64Array.from([2, 1, 2, 1]), 4, 1e-6, ctx(2), dropped)).toEqual([]);
    expect(subtractSlice(sq, Float64Array.from([-1, 0]), Float64Array.from([-3]), 1, 1e-6, ctx(2), dropped)).toBe(sq);
  });
  it('a sliver thinner than minRadius is dropped and counted', () => {
    const sq = piece([[1, 0], [-1, 0], [0, 1], [0, -1]], [1, 0, 1, 0]);
    const dropped = { count: 0 };
    // the slice covers all but x ∈ [0.9999995, 1] (width 5e-7: Chebyshev radius 2.5e-7 ≤ 1e-6)
    const r = subtractSlice(sq, Float64Array.from([1, 0]), Float64Array.from([0.9999995]), 1, 1e-6, ctx(2), dropped);
    expect(r).toEqual([]);
    expect(dropped.count).toBe(1);
  });
});

describe('random polytopes and slices, 2-D to 4-D, against javascript-lp-solver', () => {
  const r = rng(20261202);
  const randomPolytope = (dim: number, m: number, centre: number[], rad: number): { A: number[][]; b: number[] } => {
    const A: number[][] = [];
    const b: number[] = [];
    for (let i = 0; i < m; i++) {
      const a = unit(Array.from({ length: dim }, () => 2 * r() - 1));
      A.push(a);
      b.push(a.reduce((s, x, k) => s + x * centre[k], 0) + rad * (0.3 + r()));
    }
    for (let k = 0; k < dim; k++) {
      const e = new Array(dim).fill(0);
      e[k] = 1;
      A.push(e);
      b.push(centre[k] + 2 * rad);
      A.push(e.map((x) => -x));
      b.push(-(centre[k] - 2 * rad));
    }
    return { A, b };
  };
  for (const dim of [2, 3, 4]) {
    it(`${dim}-D: vertex lists give the LP support values; the difference is exact on sample points; pieces are disjoint`, () => {
      let checks = 0;
      for (let inst = 0; inst < (dim === 4 ? 6 : 10); inst++) {
        const base = randomPolytope(dim, 4 + dim * 2, new Array(dim).fill(0), 1);
        const P = piece(base.A, base.b);
        // support values: a linear function attains its maximum over a polytope at a vertex (common practice)
        for (let t = 0; t < 6; t++) {
          const c = Array.from({ length: dim }, () => 2 * r() - 1);
          const byVerts = Math.max(...vertsOf(P).map((v) => v.reduce((s, x, k) => s + x * c[k], 0)));
          expect(byVerts).toBeCloseTo(support(base.A, base.b, c), 6);
          checks++;
        }
        // subtract a few random slices in turn
        const slices = Array.from({ length: 3 }, () => randomPolytope(dim, 3 + dim, Array.from({ length: dim }, () => 1.2 * (2 * r() - 1)), 0.7));
        let pieces: CoverPiece[] = [P];
        const dropped = { count: 0 };
        for (const S of slices) {
          const next: CoverPiece[] = [];
          for (const Q of pieces) {
            const res = subtractSlice(Q, Float64Array.from(S.A.flat()), Float64Array.from(S.b), S.b.length, 1e-6, ctx(dim), dropped);
            expect(res).not.toBe('fail');
            if (Array.isArray(res)) next.push(...res);
            else next.push(res as CoverPiece);
          }
          pieces = next;
        }
        const inside = (A: number[][], b: number[], y: number[], slack: number): boolean => A.every((a, i) => a.reduce((s, x, k) => s + x * y[k], 0) <= b[i] + slack);
        // sample points: in some piece ⇔ in the base and in no slice (away from boundaries)
        for (let t = 0; t < 300; t++) {
          const y = Array.from({ length: dim }, () => 2.2 * (2 * r() - 1));
          const margin = (A: number[][], b: number[]): number => Math.min(...A.map((a, i) => Math.abs(a.reduce((s, x, k) => s + x * y[k], 0) - b[i])));
          if (Math.min(margin(base.A, base.b), ...slices.map((S) => margin(S.A, S.b))) < 1e-6) continue;
          const want = inside(base.A, base.b, y, 0) && !slices.some((S) => inside(S.A, S.b, y, 0));
          const got = pieces.some((Q) => {
            const q = rowsOf(Q);
            return inside(q.A, q.b, y, 1e-9);
          });
          expect(got, `${dim}-D instance ${inst}, point ${y}`).toBe(want);
          checks++;
        }
        // each piece: its width bound is ≥ its Chebyshev radius (LP), its vertex-mean ball lies inside it;
        // two pieces never share an interior point (Chebyshev radius of the intersection ≤ 0)
        for (let p = 0; p < pieces.length; p++) {
          const q = rowsOf(pieces[p]);
          const rho = chebRadius(q.A, q.b);
          expect(pieces[p].widthBound).toBeGreaterThanOrEqual(rho - 1e-7);
          const c = pieceCentre(pieces[p], dim);
          expect(c.radius).toBeLessThanOrEqual(rho + 1e-7);
          for (let o = p + 1; o < pieces.length; o++) {
            const u = rowsOf(pieces[o]);
            expect(chebRadius([...q.A, ...u.A], [...q.b, ...u.b])).toBeLessThan(1e-7);
          }
          checks++;
        }
      }
      expect(checks).toBeGreaterThan(100);
    }, 120_000);
  }
  it('a cut that misses, contains or splits: clipPiece keeps the object, empties it, or splits by LP support', () => {
    const P = piece([[1, 0, 0], [-1, 0, 0], [0, 1, 0], [0, -1, 0], [0, 0, 1], [0, 0, -1]], [1, 1, 1, 1, 1, 1]);
    expect(clipPiece(P, [1, 0, 0], 2, ctx(3))).toBe(P);
    expect(clipPiece(P, [1, 0, 0], -1, ctx(3))).toBeNull();
    const a = unit([1, 2, -1]);
    const Q = clipPiece(P, a, 0.3, ctx(3));
    if (!Q || Q === 'fail') throw new Error('split expected');
    const q = rowsOf(Q);
    for (const c of [[1, 0, 0], [0, 1, 0], a, [-1, -1, 1]]) {
      const byVerts = Math.max(...vertsOf(Q).map((v) => v.reduce((s, x, k) => s + x * c[k], 0)));
      expect(byVerts).toBeCloseTo(support(q.A, q.b, c), 7);
      expect(byVerts).toBeCloseTo(support([[1, 0, 0], [-1, 0, 0], [0, 1, 0], [0, -1, 0], [0, 0, 1], [0, 0, -1], a], [1, 1, 1, 1, 1, 1, 0.3], c), 7);
    }
  });
});

describe('a long thin facet wedge (taken from a 4-D solve of test/fixtures/scale/boom-4d-n20.json)', () => {
  // Facet 2 of a region found past 15 000 regions: two nearly antiparallel rows (angle ~1e-4) make a
  // wedge ~1e-2 long and ~3e-7 thick in the facet's own coordinates; the box is its padded bounding box.
  const A = [
    [-0.6978158090692658, -0.44432178596091754, 0.5618106862044425],
    [-0.5098301551773795, -0.8352052269777017, -0.2061684789218149],
    [0.6871410739409055, 0.417385268202952, -0.5946651851172127],
    [-0.6871229486417003, -0.41728014916925305, 0.5947598931999545],
    [3.500043987631011e-20, -1, -6.80880035300018e-27],
  ];
  const b = [1.3631271055742387, 1.2928083556256087, -1.3393183294788018, 1.3392268852859457, 1.200000000247926];
  const lo = [-0.7856443717779528, -1.2000903544375967, 0.505520165210764];
  const hi = [-0.7746956468293781, -1.191945630735966, 0.5147601655500242];
  // the solver's absolute tolerance for a θ-box 4 wide (1e-9 · 4)
  const coarse: CoverContext = { dim: 3, eps: 4e-9, maxVerts: 4000 };
  it('fails its check at the absolute tolerance, and facetPiece redoes it at one relative to the box', () => {
    expect(polytopePiece(Float64Array.from(A.flat()), Float64Array.from(b), 5, lo, hi, coarse)).toBe('fail');
    expect(lastCoverFailure()).toBe('box');
    const made = facetPiece(Float64Array.from(A.flat()), Float64Array.from(b), 5, lo, hi, coarse);
    if (made === 'fail' || !made.piece) throw new Error('no piece');
    expect(made.ctx.eps).toBeLessThan(coarse.eps);
    const P = made.piece;
    // the vertex list gives javascript-lp-solver's support values in the axis directions and 40 random ones
    const r = rng(20261203);
    const dirs = [[1, 0, 0], [-1, 0, 0], [0, 1, 0], [0, -1, 0], [0, 0, 1], [0, 0, -1], ...Array.from({ length: 40 }, () => unit([2 * r() - 1, 2 * r() - 1, 2 * r() - 1]))];
    for (const c of dirs) {
      let mx = -Infinity;
      for (const v of vertsOf(P)) mx = Math.max(mx, c[0] * v[0] + c[1] * v[1] + c[2] * v[2]);
      expect(Math.abs(mx - support(A, b, c))).toBeLessThan(1e-8);
    }
    // the width bound bounds javascript-lp-solver's Chebyshev radius, and the wedge is thinner than a facet piece must be (1e-6)
    const rho = chebRadius(A, b);
    expect(rho).toBeGreaterThan(0);
    expect(rho).toBeLessThanOrEqual(P.widthBound + 1e-9);
    expect(P.widthBound).toBeLessThan(1e-6);
  });
  it('a polytope that holds together at the absolute tolerance comes back unchanged, with the same context', () => {
    // the unit cube: vertices (0|1)³ (common practice)
    const cube = [[1, 0, 0], [-1, 0, 0], [0, 1, 0], [0, -1, 0], [0, 0, 1], [0, 0, -1]];
    const made = facetPiece(Float64Array.from(cube.flat()), Float64Array.from([1, 0, 1, 0, 1, 0]), 6, [-2, -2, -2], [2, 2, 2], coarse);
    if (made === 'fail' || !made.piece) throw new Error('no piece');
    expect(made.ctx).toBe(coarse);
    expect(sortedVerts(made.piece)).toEqual([[0, 0, 0], [0, 0, 1], [0, 1, 0], [0, 1, 1], [1, 0, 0], [1, 0, 1], [1, 1, 0], [1, 1, 1]]);
  });
});

describe('pieces with more than 32 rows, and a cut that leaves its piece as it was', () => {
  // the tight rows of a vertex are compared as bit masks of 32 rows a word: a 3-D polytope with 60
  // rows (random, about the origin) has vertices tight at rows of several words
  const r = rng(20261203);
  it('3-D, 60 rows: support values of the vertex list and of its cut pieces equal javascript-lp-solver; P unchanged by a tidy cut', () => {
    const dim = 3;
    let checks = 0;
    for (let inst = 0; inst < 4; inst++) {
      const A: number[][] = [];
      const b: number[] = [];
      for (let i = 0; i < 60; i++) {
        const a = unit(Array.from({ length: dim }, () => 2 * r() - 1));
        A.push(a);
        b.push(1 + 0.2 * r());
      }
      const P = piece(A, b);
      expect(P.m).toBeGreaterThan(32);
      // support values: a linear function attains its maximum over a polytope at a vertex (common practice)
      const c = unit(Array.from({ length: dim }, () => 2 * r() - 1));
      const before = JSON.stringify(P);
      const t0 = 0.1 * r();
      const cut = clipPiece(P, c, t0, ctx(dim));
      expect(JSON.stringify(P), 'a tidy cut leaves P as it was').toBe(before);
      expect(cut).not.toBe('fail');
      const Q = cut as CoverPiece;
      const rows = rowsOf(Q);
      for (let t = 0; t < 8; t++) {
        const d = Array.from({ length: dim }, () => 2 * r() - 1);
        const byVerts = Math.max(...vertsOf(Q).map((v) => v.reduce((s, x, k) => s + x * d[k], 0)));
        expect(byVerts).toBeCloseTo(support([...A, c], [...b, t0], d), 6);
        // the rows the piece keeps describe the same set: the same support value from its own rows
        expect(byVerts).toBeCloseTo(support(rows.A, rows.b, d), 6);
        checks++;
      }
    }
    expect(checks).toBe(32);
  });
});

describe('pieceFromVertices: a vertex list made elsewhere (a region builder\'s), cut by extra rows, against javascript-lp-solver', () => {
  // The exploration hands a facet its region's vertex list; here the list comes from vertices.ts's
  // double description (boxVertices + cutVertices), a different code path from cover.ts's clipping,
  // and every support value of the piece made from it is checked by javascript-lp-solver.
  const r = rng(20261203);
  for (const dim of [2, 3]) {
    it(`${dim}-D: the piece has the LP support values of {A y ≤ b} ∩ the extra rows, and keeps only facets`, () => {
      let checks = 0;
      for (let inst = 0; inst < 8; inst++) {
        const m = 5 + 2 * dim;
        const A: number[][] = [];
        const b: number[] = [];
        for (let i = 0; i < m; i++) {
          const a = unit(Array.from({ length: dim }, () => 2 * r() - 1));
          A.push(a);
          b.push(0.3 + r());
        }
        // box rows after the polytope's: row m + 2j is y_j ≤ 5, m + 2j + 1 is −y_j ≤ 5
        const box: number[][] = [];
        for (let j = 0; j < dim; j++) {
          const e = new Array(dim).fill(0);
          e[j] = 1;
          box.push(e, e.map((x) => -x));
        }
        const all = [...A, ...box];
        const ball = [...b, ...new Array(2 * dim).fill(5)];
        const V = boxVertices(dim, new Array(dim).fill(-5), new Array(dim).fill(5), m);
        const flat = Float64Array.from(all.flat());
        for (let i = 0; i < m; i++) expect(cutVertices(V, flat, ball, i, 1e-10, 4000)).toBe(true);
        // one extra row through the polytope (a sub-box face), as the frame's rows after the region's
        const cut = unit(Array.from({ length: dim }, () => 2 * r() - 1));
        const t = 0.2 * (2 * r() - 1);
        const P = pieceFromVertices(all.flat(), ball.slice(), all.length, ...flatVerts(Array.from({ length: V.count }, (_, v) => vertexX(V, v)), Array.from({ length: V.count }, (_, v) => vertexTight(V, v))), Float64Array.from(cut), Float64Array.of(t), 1, ctx(dim));
        expect(P).not.toBe('fail');
        if (P === null || P === 'fail') continue;
        const refA = [...all, cut];
        const refB = [...ball, t];
        for (let k = 0; k < 8; k++) {
          const c = Array.from({ length: dim }, () => 2 * r() - 1);
          const byVerts = Math.max(...vertsOf(P).map((v) => v.reduce((s, x, q) => s + x * c[q], 0)));
          expect(byVerts).toBeCloseTo(support(refA, refB, c), 7);
          checks++;
        }
        // every row kept is a facet: the set without it is larger (its LP support exceeds the bound)
        const rows = rowsOf(P);
        for (let i = 0; i < P.m; i++) {
          const others = rows.A.filter((_, q) => q !== i);
          const othersB = rows.b.filter((_, q) => q !== i);
          expect(support(others, othersB, rows.A[i])).toBeGreaterThan(rows.b[i] + 1e-9);
          checks++;
        }
        // the radius bound is an upper bound on the LP's Chebyshev radius
        expect(P.widthBound).toBeGreaterThanOrEqual(chebRadius(refA, refB) - 1e-9);
      }
      expect(checks).toBeGreaterThan(50);
    });
  }
  it('two vertices within eps of each other: fail (the caller builds the piece by clipping instead)', () => {
    const A = [1, 0, -1, 0, 0, 1, 0, -1];
    const b = [1, 1, 1, 1];
    const verts = [[1, 1], [-1, 1], [-1, -1], [1, -1], [1, -1 + 1e-12]];
    const tight = [[0, 2], [1, 2], [1, 3], [0, 3], [0, 3]];
    expect(pieceFromVertices(A, b, 4, ...flatVerts(verts, tight), new Float64Array(0), new Float64Array(0), 0, ctx(2))).toBe('fail');
    // without the copy: the square itself, every row a facet (common practice)
    const sq = pieceFromVertices(A.slice(), b.slice(), 4, ...flatVerts(verts.slice(0, 4), tight.slice(0, 4)), new Float64Array(0), new Float64Array(0), 0, ctx(2));
    expect(sq).not.toBe('fail');
    expect((sq as CoverPiece).m).toBe(4);
    expect((sq as CoverPiece).widthBound).toBeCloseTo(1, 12);
  });
});
