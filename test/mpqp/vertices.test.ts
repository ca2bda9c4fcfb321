import { describe, it, expect } from 'vitest';
import { boxVertices, cutVertices, firstHitWitness, vertexBound, vertexPass, vertexTight, vertexX, type VertexSet } from '../../src/mpqp/vertices.js';
import { farkasBound, prefilterScratch } from '../../src/mpqp/prefilter.js';
import { lpMaximizeReference } from '../../src/lp/reference.js';
import { rng } from '../problem/rng.js';

// The vertex pass of the region builder (LP-free facet witnesses, redundancy and box-side
// certificates). References: hand-counted vertices of cut cubes (elementary geometry, common
// practice) and javascript-lp-solver (an independent simplex from npm, through
// lpMaximizeReference, which rounds to about 1e-8) for every decision the pass takes.

const F = (xs: number[]) => Float64Array.from(xs);
/** the flat set's vertices and tight lists as one array each (read through its accessors) */
/** The rows of the cube [-1, 1]^n (θ_j ≤ 1, -θ_j ≤ 1 for each j) as growable lists, for cuts to be pushed after them. */
function cubeRows(n: number): { A: number[]; b: number[] } {
  const A: number[] = [];
  const b: number[] = [];
  for (let j = 0; j < n; j++) {
    for (let k = 0; k < n; k++) A.push(k === j ? 1 : 0);
    b.push(1);
    for (let k = 0; k < n; k++) A.push(k === j ? -1 : 0);
    b.push(1);
  }
  return { A, b };
}
const xs = (V: VertexSet): number[][] => Array.from({ length: V.count }, (_, v) => vertexX(V, v));
const ts = (V: VertexSet): number[][] => Array.from({ length: V.count }, (_, v) => vertexTight(V, v));

describe('cutVertices on the unit cube (hand-counted)', () => {
  // rows 0..5: the box sides (θ_j ≤ 1 at 2j, −θ_j ≤ 0 at 2j + 1); row 6 the cut
  const n = 3;
  const box = (): { A: number[]; b: number[] } => {
    const A: number[] = [];
    const b: number[] = [];
    for (let j = 0; j < n; j++) {
      A.push(...[0, 1, 2].map((k) => (k === j ? 1 : 0)));
      b.push(1);
      A.push(...[0, 1, 2].map((k) => (k === j ? -1 : 0)));
      b.push(0);
    }
    return { A, b };
  };
  it('x + y + z ≤ 1.5 leaves the 4 corners with sum ≤ 1 and 6 points on the cut edges: 10 vertices', () => {
    const { A, b } = box();
    const s = 1 / Math.sqrt(3);
    A.push(s, s, s);
    b.push(1.5 * s);
    const V = boxVertices(n, [0, 0, 0], [1, 1, 1], 0);
    expect(V.count).toBe(8);
    expect(cutVertices(V, F(A), F(b), 6, 1e-10, 100)).toBe(true);
    expect(V.count).toBe(10);
    const sums = xs(V).map((x) => x[0] + x[1] + x[2]);
    expect(sums.filter((t) => Math.abs(t - 1.5) < 1e-12).length).toBe(6);
    for (let v = 0; v < V.count; v++) if (Math.abs(sums[v] - 1.5) < 1e-12) expect(vertexTight(V, v).length).toBe(n);
  });
  it('x + y + z ≤ 1 passes through three corners: they gain the row, 4 vertices stay (a tetrahedron)', () => {
    const { A, b } = box();
    const s = 1 / Math.sqrt(3);
    A.push(s, s, s);
    b.push(s);
    const V = boxVertices(n, [0, 0, 0], [1, 1, 1], 0);
    expect(cutVertices(V, F(A), F(b), 6, 1e-10, 100)).toBe(true);
    expect(V.count).toBe(4);
    expect(ts(V).filter((t) => t.includes(6)).length).toBe(3);
    // each of the three is degenerate now (4 rows through it in 3-D)
    expect(ts(V).filter((t) => t.length === 4).length).toBe(3);
  });
  it('the hashed edge search and the all-pairs one give the same vertices (random cuts of the 4-cube, 2·4 + 12 rows)', () => {
    const r = rng(99);
    const n4 = 4;
    for (let trial = 0; trial < 20; trial++) {
      const { A, b } = cubeRows(n4);
      for (let i = 0; i < 12; i++) {
        const a = Array.from({ length: n4 }, () => 2 * r() - 1);
        const nn = Math.hypot(...a);
        A.push(...a.map((v) => v / nn));
        b.push(0.3 + 0.6 * r());
      }
      const sets = [true, false].map((hash) => {
        const V = boxVertices(n4, [-1, -1, -1, -1], [1, 1, 1, 1], 0);
        for (let i = 0; i < 12; i++) expect(cutVertices(V, F(A), F(b), 2 * n4 + i, 1e-10, 4000, hash)).toBe(true);
        for (const x of xs(V))
          for (let q = 0; q < b.length; q++) {
            let t = -b[q];
            for (let j = 0; j < n4; j++) t += A[q * n4 + j] * x[j];
            expect(t).toBeLessThanOrEqual(1e-9);
          }
        return xs(V).map((x, v) => `${x.map((t) => t.toFixed(9)).join(',')}|${vertexTight(V, v).join(',')}`).sort();
      });
      expect(sets[0]).toEqual(sets[1]);
      expect(sets[0].length).toBeGreaterThan(n4);
    }
  });
  it('the ordered face hash (the default from 33 pairs up to the hashed search) lists the all-pairs vertices in the all-pairs order, bit for bit (random cuts of the 4- and 5-cube)', () => {
    // the order matters: region vertex lists feed facet lists and ties of later searches, and tables
    // are compared byte for byte; every vertex is also checked against the rows (elementary geometry)
    const r = rng(123);
    for (const nd of [4, 5])
      for (let trial = 0; trial < 12; trial++) {
        const { A, b } = cubeRows(nd);
        const cuts = 14;
        for (let i = 0; i < cuts; i++) {
          const a = Array.from({ length: nd }, () => 2 * r() - 1);
          const nn = Math.hypot(...a);
          A.push(...a.map((v) => v / nn));
          b.push(0.2 + 0.7 * r());
        }
        const runs = (['ordered', false] as const).map((hash) => {
          const V = boxVertices(nd, Array(nd).fill(-1), Array(nd).fill(1), 0);
          for (let i = 0; i < cuts; i++) expect(cutVertices(V, F(A), F(b), 2 * nd + i, 1e-10, 4000, hash)).toBe(true);
          for (const x of xs(V))
            for (let q = 0; q < b.length; q++) {
              let t = -b[q];
              for (let j = 0; j < nd; j++) t += A[q * nd + j] * x[j];
              expect(t).toBeLessThanOrEqual(1e-9);
            }
          return { x: xs(V), tight: ts(V) };
        });
        expect(runs[0].x.length).toBe(runs[1].x.length);
        expect(runs[0].x.length).toBeGreaterThan(nd);
        runs[0].x.forEach((x, v) => {
          x.forEach((t, j) => expect(Object.is(t, runs[1].x[v][j])).toBe(true));
          expect(runs[0].tight[v]).toEqual(runs[1].tight[v]);
        });
      }
  });
  it('a cut past the vertex limit gives up and leaves the set as it was', () => {
    const { A, b } = box();
    const s = 1 / Math.sqrt(3);
    A.push(s, s, s);
    b.push(1.5 * s);
    const V = boxVertices(n, [0, 0, 0], [1, 1, 1], 0);
    const before = { x: xs(V), tight: ts(V) };
    expect(cutVertices(V, F(A), F(b), 6, 1e-10, 9)).toBe(false);
    expect(V.count).toBe(8);
    expect(xs(V)).toEqual(before.x);
    expect(ts(V)).toEqual(before.tight);
  });
  it('the flat set against the double description cut written out here with one array per vertex, bit for bit (random and through-a-vertex cuts of the 3-, 4- and 5-cube, one set reused throughout)', () => {
    // Reference: the incremental double description step (Motzkin et al. 1953) with Fukuda &
    // Prodon's adjacency test (1996), common practice, written out below on plain arrays: vertices
    // within eps of the plane gain the row; an outside vertex p and an inside vertex q span an edge
    // when they share n − 1 tight rows (both simple) or share ≥ n − 1 rows of rank n − 1 (Gaussian
    // elimination, pivot threshold 1e-9); the crossing is x_p + t(x_q − x_p), t = s_p / (s_p − s_q),
    // s = −b + Σ a_j x_j in axis order. The listing order is the kept vertices, then per outside
    // vertex (ascending) its simple partners (ascending), then its degenerate ones (ascending).
    const rank = (A: number[], n: number, rows: number[]): number => {
      const M = rows.map((r) => A.slice(r * n, (r + 1) * n));
      let rk = 0;
      for (let col = 0; col < n && rk < M.length; col++) {
        let p = -1;
        let best = 1e-9;
        for (let i = rk; i < M.length; i++)
          if (Math.abs(M[i][col]) > best) {
            best = Math.abs(M[i][col]);
            p = i;
          }
        if (p < 0) continue;
        [M[p], M[rk]] = [M[rk], M[p]];
        for (let i = rk + 1; i < M.length; i++) {
          const f = M[i][col] / M[rk][col];
          for (let j = col; j < n; j++) M[i][j] -= f * M[rk][j];
        }
        rk++;
      }
      return rk;
    };
    const refCut = (X: number[][], T: number[][], A: number[], b: number[], n: number, r: number, eps: number): { X: number[][]; T: number[][] } => {
      const s = X.map((x) => {
        let t = -b[r];
        for (let j = 0; j < n; j++) t += A[r * n + j] * x[j];
        return t;
      });
      const gain = (t: number[]): number[] => (t.includes(r) ? [...t] : [...t, r].sort((u, v) => u - v));
      const nx: number[][] = [];
      const nt: number[][] = [];
      X.forEach((x, v) => {
        if (s[v] > eps) return;
        nx.push(x);
        nt.push(s[v] >= -eps ? gain(T[v]) : T[v]);
      });
      if (!s.some((t) => t > eps)) return { X: nx, T: nt };
      const inside = X.map((_, q) => q).filter((q) => s[q] < -eps);
      const cross = (p: number, q: number, c: number[]): void => {
        const t = s[p] / (s[p] - s[q]);
        nx.push(X[p].map((xp, j) => xp + t * (X[q][j] - xp)));
        nt.push(gain(c));
      };
      X.forEach((_, p) => {
        if (s[p] <= eps) return;
        const simple = T[p].length === n;
        for (const pass of simple ? ['simple', 'degenerate'] : ['any']) {
          for (const q of inside) {
            const qs = T[q].length === n;
            if ((pass === 'simple' && !qs) || (pass === 'degenerate' && qs)) continue;
            const c = T[p].filter((i) => T[q].includes(i));
            if (pass === 'simple' ? c.length === n - 1 : c.length >= n - 1 && rank(A, n, c) === n - 1) cross(p, q, c);
          }
        }
      });
      return { X: nx, T: nt };
    };
    let reused: VertexSet | undefined;
    let degenerateSeen = 0;
    for (const nd of [3, 4, 5])
      for (let trial = 0; trial < 10; trial++)
        for (const mode of ['ordered', false, true] as const) {
          const { A, b } = cubeRows(nd);
          const lo = Array(nd).fill(-1);
          const hi = Array(nd).fill(1);
          const V = boxVertices(nd, lo, hi, 0, reused);
          reused = V;
          let ref = { X: xs(V), T: ts(V) };
          const rr = rng(1000 * nd + trial); // the same cuts in every mode
          for (let i = 0; i < 12; i++) {
            const a = Array.from({ length: nd }, () => 2 * rr() - 1);
            const nn = Math.hypot(...a);
            const u = a.map((x) => x / nn);
            if (i % 4 === 3) {
              // through a current vertex (it becomes degenerate), facing so that the origin stays inside
              const x = ref.X[Math.floor(rr() * ref.X.length)];
              let t = 0;
              for (let k = 0; k < nd; k++) t += u[k] * x[k];
              if (t < 0) for (let k = 0; k < nd; k++) u[k] = -u[k];
              A.push(...u);
              b.push(Math.abs(t));
            } else {
              A.push(...u);
              b.push(0.2 + 0.7 * rr());
            }
            const row = 2 * nd + i;
            expect(cutVertices(V, F(A), F(b), row, 1e-10, 4000, mode)).toBe(true);
            ref = refCut(ref.X, ref.T, A, b, nd, row, 1e-10);
          }
          degenerateSeen += ref.T.filter((t) => t.length > nd).length;
          const got = xs(V).map((x, v) => `${x.map((t) => Object.is(t, -0) ? '-0' : String(t)).join(',')}|${vertexTight(V, v).join(',')}`);
          const want = ref.X.map((x, v) => `${x.map((t) => Object.is(t, -0) ? '-0' : String(t)).join(',')}|${ref.T[v].join(',')}`);
          expect(got.length).toBeGreaterThan(nd);
          // 'ordered' and all-pairs keep the listing order; the hashed search (true) lists crossings by face
          if (mode === true) expect([...got].sort()).toEqual([...want].sort());
          else expect(got).toEqual(want);
        }
    expect(degenerateSeen).toBeGreaterThan(10);
  });
});

/**
 * A random region in n-D: m rows with θ = 0 strictly inside, unit normals, plus the box rows last
 * (row m0 + 2j: θ_j ≤ 3, m0 + 2j + 1: −θ_j ≤ 3), with near-degenerate extras that a wrong proof
 * would trip over: a duplicate row, a row 1e-9 outside another, a row touching a vertex of the
 * others, a row 1e-6 past a vertex.
 */
function randomRegion(r: () => number, n: number): { A: Float64Array; b: Float64Array; m: number; lo: Float64Array; hi: Float64Array } {
  const rows: number[][] = [];
  const rhs: number[] = [];
  const m0 = 2 * n + 6;
  for (let i = 0; i < m0; i++) {
    const a = Array.from({ length: n }, () => 2 * r() - 1);
    const nn = Math.hypot(...a);
    rows.push(a.map((v) => v / nn));
    rhs.push(0.3 + r());
  }
  rows.push([...rows[1]]);
  rhs.push(rhs[1]); // duplicate
  rows.push([...rows[2]]);
  rhs.push(rhs[2] + 1e-9); // a hair outside another
  // a vertex of the polytope of the random rows (the reference's maximiser of a random objective)
  const c = Float64Array.from({ length: n }, () => 2 * r() - 1);
  const flat = (k: number) => F(rows.slice(0, k).flat());
  const v = lpMaximizeReference(c, flat(m0), F(rhs.slice(0, m0)), m0, n).x;
  const a = Array.from({ length: n }, (_, j) => c[j] + 0.05 * (2 * r() - 1));
  const na = Math.hypot(...a);
  const au = a.map((t) => t / na);
  const av = au.reduce((s, t, j) => s + t * v[j], 0);
  if (av > 0.05) {
    // (θ = 0 stays strictly inside)
    rows.push(au);
    rhs.push(av); // touches the polytope at (about) that vertex
    rows.push([...au]);
    rhs.push(av - 1e-6); // the same normal, 1e-6 inside: cuts the vertex off by 1e-6
  }
  const lo = new Float64Array(n).fill(-3);
  const hi = new Float64Array(n).fill(3);
  const m = rows.length + 2 * n;
  const A = new Float64Array(m * n);
  const b = new Float64Array(m);
  rows.forEach((row, i) => {
    row.forEach((t, j) => (A[i * n + j] = t));
    b[i] = rhs[i];
  });
  for (let j = 0; j < n; j++) {
    const k = rows.length + 2 * j;
    A[k * n + j] = 1;
    b[k] = hi[j];
    A[(k + 1) * n + j] = -1;
    b[k + 1] = -lo[j];
  }
  return { A, b, m, lo, hi };
}

/** javascript-lp-solver's max c·θ over the rows of A other than `skip`. */
function refMax(c: ArrayLike<number>, A: Float64Array, b: Float64Array, m: number, n: number, skip: number): number {
  const rows: number[] = [];
  const rhs: number[] = [];
  for (let q = 0; q < m; q++) {
    if (q === skip) continue;
    for (let j = 0; j < n; j++) rows.push(A[q * n + j]);
    rhs.push(b[q]);
  }
  const res = lpMaximizeReference(c, F(rows), F(rhs), m - (skip >= 0 ? 1 : 0), n);
  expect(res.status).toBe('optimal');
  return res.value;
}

describe('vertexPass vs javascript-lp-solver on seeded random regions in 3-D to 5-D', () => {
  it('every row it drops is redundant, every row it makes a facet is one, every box side it proves holds', () => {
    const r = rng(20261203);
    const tolRed = 1e-9;
    const counts = { dropped: 0, facets: 0, sides: 0, trials: 0 };
    for (let trial = 0; trial < 90; trial++) {
      const n = 3 + (trial % 3);
      const { A, b, m, lo, hi } = randomRegion(r, n);
      const center = new Float64Array(n); // θ = 0 is strictly inside
      const slack = Float64Array.from(b);
      const sure = new Uint8Array(m);
      // a few sure rows to start from, as the builder's normal rays give them: the first hit
      for (let k = 0; k < m - 2 * n; k += 3) {
        const h = firstHitWitness(A, m, n, slack, A.subarray(k * n, (k + 1) * n));
        if (h >= 0 && h < m - 2 * n) sure[h] = 1;
      }
      const before = Uint8Array.from(sure);
      const alive = new Uint8Array(m).fill(1);
      const sideKnown = new Uint8Array(2 * n);
      const bbLo = Float64Array.from(lo);
      const bbHi = Float64Array.from(hi);
      vertexPass(A, b, m, n, lo, hi, center, slack, sure, alive, sideKnown, bbLo, bbHi, prefilterScratch(n), tolRed);
      counts.trials++;
      for (let q = 0; q < m - 2 * n; q++) {
        const value = refMax(A.subarray(q * n, (q + 1) * n), A, b, m, n, q);
        if (!alive[q]) {
          // dropped: its LP over the other rows stays within the redundancy tolerance (the reference rounds to ~1e-8)
          expect(value, `row ${q} dropped (trial ${trial})`).toBeLessThanOrEqual(b[q] + tolRed + 2e-8);
          counts.dropped++;
        }
        if (sure[q] && !before[q]) {
          // a facet by witness: its LP breaks it by more than the witness margin
          expect(value, `row ${q} made a facet (trial ${trial})`).toBeGreaterThan(b[q] + 5e-8);
          counts.facets++;
        }
      }
      for (let j = 0; j < n; j++) {
        const e = new Float64Array(n);
        e[j] = 1;
        if (sideKnown[2 * j]) {
          const v = refMax(e, A, b, m, n, -1);
          expect(bbHi[j]).toBeGreaterThanOrEqual(v - 2e-8);
          expect(bbHi[j]).toBeLessThanOrEqual(v + 1e-6);
          counts.sides++;
        }
        e[j] = -1;
        if (sideKnown[2 * j + 1]) {
          const v = refMax(e, A, b, m, n, -1);
          expect(bbLo[j]).toBeLessThanOrEqual(-v + 2e-8);
          expect(bbLo[j]).toBeGreaterThanOrEqual(-v - 1e-6);
          counts.sides++;
        }
      }
    }
    // the pass decides most of it (else this test proves little)
    console.log(`vertexPass on ${counts.trials} random regions: ${counts.dropped} rows dropped, ${counts.facets} facets by witness, ${counts.sides} box sides, all confirmed by javascript-lp-solver`);
    expect(counts.dropped).toBeGreaterThan(counts.trials);
    expect(counts.facets).toBeGreaterThan(counts.trials);
    expect(counts.sides).toBeGreaterThan(2 * counts.trials);
  });
});

describe('vertexBound (weak duality at a vertex, common practice) on the unit square', () => {
  // rows x ≤ 1, −x ≤ 0, y ≤ 1, −y ≤ 0, and x + y ≤ 2 (through the corner (1, 1): degenerate there)
  const s = Math.SQRT1_2;
  const A = F([1, 0, -1, 0, 0, 1, 0, -1, s, s]);
  const b = F([1, 0, 1, 0, 2 * s]);
  const bound = (c: ArrayLike<number>, W: ArrayLike<number>) => farkasBound(c, A, b, W, 2, [0, 0], [1, 1], prefilterScratch(2));
  it('x + 2y at the degenerate corner: one of the 2-row subsets proves 3', () => {
    expect(vertexBound(F([1, 2]), Int32Array.from([0, 2, 4]), 2, bound)).toBeCloseTo(3, 12);
  });
  it('x − y at (1, 1) is not in its normal cone: no proof', () => {
    expect(vertexBound(F([1, -1]), Int32Array.from([0, 2, 4]), 2, bound)).toBe(Infinity);
  });
});

/**
 * A random region in n-D that reaches the box: rows with θ = 0 strictly inside, then the box sides
 * (row m0 + 2j: θ_j ≤ hi_j, m0 + 2j + 1: −θ_j ≤ −lo_j) close enough that most of them cut the
 * region. With `touch`, one extra pair of rows makes the region meet the side θ_0 ≤ hi_0 at a point
 * or along an edge only (a wedge whose apex lies on the side): that side is *not* a facet.
 */
function boxedRegion(r: () => number, n: number, touch: 'none' | 'point' | 'edge'): { A: Float64Array; b: Float64Array; m: number; lo: Float64Array; hi: Float64Array } {
  const rows: number[][] = [];
  const rhs: number[] = [];
  for (let i = 0; i < 2 * n + 4; i++) {
    const a = Array.from({ length: n }, () => 2 * r() - 1);
    const nn = Math.hypot(...a);
    rows.push(a.map((v) => v / nn));
    rhs.push(0.4 + 0.8 * r());
  }
  const lo = Float64Array.from({ length: n }, () => -0.3 - 0.4 * r());
  const hi = Float64Array.from({ length: n }, () => 0.3 + 0.4 * r());
  if (touch !== 'none') {
    // planes through the point (hi_0, 0, …) (or the line {θ_0 = hi_0, θ_2.. = 0} for 'edge') that
    // keep θ = 0 inside: −θ_0·s + θ_1·c ≤ −hi_0·s and −θ_0·s − θ_1·c ≤ −hi_0·s tilt away from the side
    const s = 0.6;
    const c = 0.8;
    const fix = (a: number[]): number[] => a;
    const base = (sign: number, k: number): number[] => fix(Array.from({ length: n }, (_, j) => (j === 0 ? s : j === k ? sign * c : 0)));
    // s·θ_0 ± c·θ_k ≤ s·hi_0: both hold at θ_0 = hi_0 only where θ_k = 0
    const ks = touch === 'point' ? Array.from({ length: n - 1 }, (_, q) => q + 1) : [1];
    for (const k of ks)
      for (const sign of [1, -1]) {
        rows.push(base(sign, k));
        rhs.push(s * hi[0]);
      }
  }
  const m0 = rows.length;
  const m = m0 + 2 * n;
  const A = new Float64Array(m * n);
  const b = new Float64Array(m);
  rows.forEach((row, i) => {
    row.forEach((t, j) => (A[i * n + j] = t));
    b[i] = rhs[i];
  });
  for (let j = 0; j < n; j++) {
    const k = m0 + 2 * j;
    A[k * n + j] = 1;
    b[k] = hi[j];
    A[(k + 1) * n + j] = -1;
    b[k + 1] = -lo[j];
  }
  return { A, b, m, lo, hi };
}

describe('vertexPass: box sides made facets by a witness ray (javascript-lp-solver confirms each)', () => {
  // A box side marked sure skips its redundancy LP in the builder, which would keep it: so the LP
  // over every other row must break the side by more than the witness margin. Sides the region
  // meets only at a point or along an edge (LP value = the side's bound) must never be marked.
  it('random regions cut by the box, and wedges touching a side at a point or along an edge (3-D to 5-D)', () => {
    const r = rng(8128);
    const counts = { trials: 0, sides: 0, notFacets: 0, touched: 0 };
    for (let trial = 0; trial < 120; trial++) {
      const n = 3 + (trial % 3);
      const touch = (['none', 'point', 'edge'] as const)[Math.floor(trial / 3) % 3];
      const { A, b, m, lo, hi } = boxedRegion(r, n, touch);
      const center = new Float64Array(n);
      const slack = Float64Array.from(b);
      const sure = new Uint8Array(m);
      for (let k = 0; k < m - 2 * n; k++) {
        const h = firstHitWitness(A, m, n, slack, A.subarray(k * n, (k + 1) * n));
        if (h >= 0 && h < m - 2 * n) sure[h] = 1;
      }
      const alive = new Uint8Array(m).fill(1);
      vertexPass(A, b, m, n, lo, hi, center, slack, sure, alive, new Uint8Array(2 * n), Float64Array.from(lo), Float64Array.from(hi), prefilterScratch(n), 1e-9);
      counts.trials++;
      for (let q = m - 2 * n; q < m; q++) {
        const value = refMax(A.subarray(q * n, (q + 1) * n), A, b, m, n, q);
        if (sure[q]) {
          expect(value, `box row ${q} made a facet (trial ${trial}, ${touch})`).toBeGreaterThan(b[q] + 5e-8);
          counts.sides++;
        } else if (value <= b[q] + 1e-8) counts.notFacets++;
      }
      if (touch !== 'none') {
        // the side θ_0 ≤ hi_0 is met in a point or an edge: not a facet, never marked
        const q = m - 2 * n;
        expect(refMax(A.subarray(q * n, (q + 1) * n), A, b, m, n, q)).toBeLessThanOrEqual(b[q] + 1e-8);
        expect(sure[q], `trial ${trial}: a side touched along a ${touch} was marked a facet`).toBe(0);
        counts.touched++;
      }
    }
    console.log(`box-side witnesses on ${counts.trials} regions: ${counts.sides} sides made facets, ${counts.notFacets} sides not facets, ${counts.touched} touched at a point or edge; all confirmed by javascript-lp-solver`);
    expect(counts.sides).toBeGreaterThan(counts.trials);
    expect(counts.touched).toBeGreaterThan(50);
  });
});
