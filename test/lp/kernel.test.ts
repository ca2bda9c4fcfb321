import { describe, it, expect } from 'vitest';
import { tol } from '../../src/tol.js';
import { lpMaximize, lpMaximizeFrom, findFeasiblePoint, chebyshevBall, lpCounter, type LpResult } from '../../src/lp/kernel.js';
import { lpMaximizeReference } from '../../src/lp/reference.js';
import { rng } from '../problem/rng.js';

// Reference for the LP values and statuses: javascript-lp-solver (general-purpose simplex from npm),
// through the adapter lpMaximizeReference. Chebyshev radii: analytic (box: half the smallest width)
// and the handbook inradius of a triangle r = 2·area/perimeter, incentre = (a·A + b·B + c·C)/(a+b+c)
// with a, b, c the side lengths opposite A, B, C.

/** optimal values must agree to this relative accuracy (the reference rounds to 1e-8 absolute) */
const VALUE_REL = 1e-7;
/** accepted violation of a row by a returned point, as a distance (rows here are not unit length) */
const FEAS = 10 * tol.primal;

interface Lp {
  label: string;
  c: Float64Array;
  A: Float64Array;
  b: Float64Array;
  m: number;
  n: number;
  /** a point known to satisfy every row strictly (null when the LP is infeasible) */
  interior: Float64Array | null;
}

type Rnd = () => number;
const uni = (r: Rnd, lo: number, hi: number) => lo + (hi - lo) * r();
const randVec = (r: Rnd, n: number, s = 1) => Array.from({ length: n }, () => uni(r, -s, s));
const dotv = (a: ArrayLike<number>, b: ArrayLike<number>) => {
  let s = 0;
  for (let j = 0; j < a.length; j++) s += a[j] * b[j];
  return s;
};

class Builder {
  rows: number[][] = [];
  rhs: number[] = [];
  constructor(readonly n: number) {}
  add(a: number[], beta: number): void {
    this.rows.push(a);
    this.rhs.push(beta);
  }
  /** |x_j − centre_j| ≤ half_j: keeps every LP bounded */
  box(centre: number[], half: number[]): void {
    for (let j = 0; j < this.n; j++) {
      const e = new Array<number>(this.n).fill(0);
      e[j] = 1;
      this.add(e, centre[j] + half[j]);
      this.add(e.map((v) => -v), -(centre[j] - half[j]));
    }
  }
  shuffle(r: Rnd): void {
    for (let i = this.rows.length - 1; i > 0; i--) {
      const k = Math.floor(r() * (i + 1));
      [this.rows[i], this.rows[k]] = [this.rows[k], this.rows[i]];
      [this.rhs[i], this.rhs[k]] = [this.rhs[k], this.rhs[i]];
    }
  }
  build(label: string, c: number[], interior: number[] | null): Lp {
    const m = this.rows.length;
    const A = new Float64Array(m * this.n);
    this.rows.forEach((row, i) => row.forEach((v, j) => (A[i * this.n + j] = v)));
    return { label, c: Float64Array.from(c), A, b: Float64Array.from(this.rhs), m, n: this.n, interior: interior && Float64Array.from(interior) };
  }
}

/** Bounded random LP families; `seed` fixes the instance. Row counts stay within 5..60. */
function randomLp(family: 'general' | 'duplicated' | 'vertex' | 'multiples' | 'mixed', seed: number): Lp {
  const r = rng(seed);
  const n = 2 + Math.floor(r() * 5); // 2..6
  const mTarget = Math.max(5, 2 * n + 1 + Math.floor(r() * (60 - 2 * n - 1 - 20))); // leaves room for copies
  const bld = new Builder(n);
  const xc = randVec(r, n, 2);
  const half = Array.from({ length: n }, () => uni(r, 0.5, 4));
  bld.box(xc, half);
  const c = randVec(r, n, 3);
  if (family === 'vertex' || family === 'mixed') {
    // many rows through one vertex v, normals in a cone around e, and c a positive combination of
    // them: v is optimal and degenerate (more than n rows active there)
    const e = randVec(r, n);
    const en = Math.hypot(...e);
    const v = xc.map((x, j) => x + (0.3 * half[j] * e[j]) / en);
    const k = n + 2 + Math.floor(r() * (family === 'vertex' ? 3 * n : n));
    c.fill(0);
    for (let q = 0; q < k; q++) {
      const a = e.map((x) => x / en + uni(r, -0.6, 0.6) / Math.sqrt(n));
      if (dotv(a, e) <= 0.05 * en) continue;
      bld.add(a, dotv(a, v));
      const w = uni(r, 0.1, 1);
      a.forEach((x, j) => (c[j] += w * x));
    }
    // the interior point: step back from v against e
    const back = v.map((x, j) => x - (0.1 * Math.min(...half) * e[j]) / en);
    while (bld.rows.length < mTarget - 3) {
      const a = randVec(r, n);
      bld.add(a, Math.max(dotv(a, v), dotv(a, back)) + uni(r, 0.01, 1));
    }
    if (family === 'mixed') addCopies(bld, r, 60);
    bld.shuffle(r);
    return bld.build(`${family} seed ${seed} n=${n} m=${bld.rows.length}`, c, back);
  }
  while (bld.rows.length < mTarget) {
    const a = randVec(r, n);
    bld.add(a, dotv(a, xc) + uni(r, 0.05, 2)); // xc stays strictly inside
  }
  if (family === 'duplicated' || family === 'multiples') addCopies(bld, r, 60, family === 'multiples');
  bld.shuffle(r);
  return bld.build(`${family} seed ${seed} n=${n} m=${bld.rows.length}`, c, xc);
}

/** Append exact duplicates (or positive multiples k·[a β], k ∈ [0.05, 20]) of random existing rows. */
function addCopies(bld: Builder, r: Rnd, mMax: number, multiples = r() < 0.5): void {
  const base = bld.rows.length;
  const copies = Math.min(mMax - base, 3 + Math.floor(r() * base));
  for (let q = 0; q < copies; q++) {
    const i = Math.floor(r() * base);
    const k = multiples ? Math.exp(uni(r, Math.log(0.05), Math.log(20))) : 1;
    bld.add(bld.rows[i].map((v) => k * v), k * bld.rhs[i]);
  }
}

function maxRowViolation(lp: Lp, x: ArrayLike<number>, skip?: Uint8Array): number {
  let worst = -Infinity;
  for (let i = 0; i < lp.m; i++) {
    if (skip?.[i]) continue;
    let s = -lp.b[i];
    let nrm = 0;
    for (let j = 0; j < lp.n; j++) {
      s += lp.A[i * lp.n + j] * x[j];
      nrm += lp.A[i * lp.n + j] ** 2;
    }
    worst = Math.max(worst, s / Math.sqrt(nrm));
  }
  return worst;
}

/**
 * Run a kernel call and require that the kernel itself answered: its fallback is the very reference
 * it is compared with, so a fallback would make the comparison vacuous.
 */
function own<T>(label: string, f: () => T): T {
  const before = lpCounter.fallbacks;
  const out = f();
  expect(lpCounter.fallbacks - before, `${label}: kernel fell back to javascript-lp-solver`).toBe(0);
  return out;
}

function expectMatchesReference(lp: Lp, got: LpResult, ref: LpResult, what: string): void {
  const msg = `${lp.label}: ${what}`;
  expect(got.status, msg).toBe(ref.status);
  if (ref.status !== 'optimal') return;
  expect(Math.abs(got.value - ref.value), `${msg}: value ${got.value} vs reference ${ref.value}`).toBeLessThanOrEqual(VALUE_REL * (1 + Math.abs(ref.value)));
  expect(Math.abs(got.value - dotv(lp.c, got.x)), `${msg}: value = cᵀx`).toBeLessThanOrEqual(1e-12 * (1 + Math.abs(got.value)));
  expect(maxRowViolation(lp, got.x), `${msg}: A x ≤ b`).toBeLessThanOrEqual(FEAS);
}

const families = ['general', 'duplicated', 'vertex', 'multiples', 'mixed'] as const;
const perFamily = 64; // 5 × 64 = 320 bounded LPs

describe('lpMaximize = javascript-lp-solver on 320 seeded bounded LPs (2–6 variables, 5–60 rows)', () => {
  for (const family of families) {
    it(`${family}: ${perFamily} instances, status, optimal value (1e-7 rel), A x ≤ b`, () => {
      let rowsMin = Infinity;
      let rowsMax = 0;
      let degenerateVertices = 0;
      for (let s = 0; s < perFamily; s++) {
        const lp = randomLp(family, 7100 + 1000 * families.indexOf(family) + s);
        rowsMin = Math.min(rowsMin, lp.m);
        rowsMax = Math.max(rowsMax, lp.m);
        const ref = lpMaximizeReference(lp.c, lp.A, lp.b, lp.m, lp.n);
        expect(ref.status, lp.label).toBe('optimal');
        // from the origin (feasible or not: phase 1 runs when it is not)
        const got = own(lp.label, () => lpMaximize(lp.c, lp.A, lp.b, lp.m, lp.n));
        expectMatchesReference(lp, got, ref, 'lpMaximize from 0');
        // from a known interior point, both entries
        expectMatchesReference(lp, own(lp.label, () => lpMaximize(lp.c, lp.A, lp.b, lp.m, lp.n, lp.interior!)), ref, 'lpMaximize from interior');
        expectMatchesReference(lp, own(lp.label, () => lpMaximizeFrom(lp.c, lp.A, lp.b, lp.m, lp.n, lp.interior!)), ref, 'lpMaximizeFrom interior');
        // count rows active at the optimum: the degenerate families must really be degenerate
        let active = 0;
        for (let i = 0; i < lp.m; i++) {
          let s2 = -lp.b[i];
          for (let j = 0; j < lp.n; j++) s2 += lp.A[i * lp.n + j] * got.x[j];
          if (Math.abs(s2) <= 1e-7 * (1 + Math.abs(lp.b[i]))) active++;
        }
        if (active > lp.n) degenerateVertices++;
      }
      expect(rowsMin).toBeGreaterThanOrEqual(5);
      expect(rowsMax).toBeLessThanOrEqual(60);
      if (family === 'vertex' || family === 'mixed') expect(degenerateVertices).toBe(perFamily);
      if (family === 'duplicated' || family === 'multiples') expect(degenerateVertices).toBeGreaterThan(0);
    });
  }

  it('unbounded: the positive orthant with an increasing objective (both say unbounded)', () => {
    for (let s = 0; s < 10; s++) {
      const r = rng(8800 + s);
      const n = 2 + (s % 5);
      const bld = new Builder(n);
      for (let j = 0; j < n; j++) {
        const e = new Array<number>(n).fill(0);
        e[j] = -1;
        bld.add(e, 0); // x_j ≥ 0
      }
      for (let q = 0; q < 4; q++) bld.add(randVec(r, n).map((v) => -Math.abs(v)), 1); // rows with a ≤ 0: never bind going up
      const c = Array.from({ length: n }, () => uni(r, 0.1, 1));
      const lp = bld.build(`unbounded seed ${8800 + s}`, c, null);
      const ref = lpMaximizeReference(lp.c, lp.A, lp.b, lp.m, lp.n);
      expect(ref.status).toBe('unbounded');
      expect(own(lp.label, () => lpMaximize(lp.c, lp.A, lp.b, lp.m, lp.n)).status, lp.label).toBe('unbounded');
    }
  });
});

describe('infeasible LPs', () => {
  it('40 seeded instances with a contradictory pair a·x ≤ β, −a·x ≤ −β−δ: kernel and reference both infeasible, findFeasiblePoint null', () => {
    for (let s = 0; s < 40; s++) {
      const r = rng(9100 + s);
      const base = randomLp(families[s % families.length], 9100 + s);
      const n = base.n;
      const a = randVec(r, n);
      const beta = uni(r, -1, 1);
      const delta = [1e-4, 1e-2, 1, 10][s % 4] * Math.hypot(...a);
      const A = new Float64Array((base.m + 2) * n);
      A.set(base.A);
      a.forEach((v, j) => {
        A[base.m * n + j] = v;
        A[(base.m + 1) * n + j] = -v;
      });
      const b = Float64Array.from([...base.b, beta, -beta - delta]);
      const lp: Lp = { ...base, A, b, m: base.m + 2, interior: null, label: `${base.label} + contradictory pair δ=${delta}` };
      expect(lpMaximizeReference(lp.c, lp.A, lp.b, lp.m, n).status, lp.label).toBe('infeasible');
      expect(own(lp.label, () => lpMaximize(lp.c, lp.A, lp.b, lp.m, n)).status, lp.label).toBe('infeasible');
      expect(lpMaximize(lp.c, lp.A, lp.b, lp.m, n, base.interior!).status, lp.label).toBe('infeasible');
      expect(own(lp.label, () => findFeasiblePoint(lp.A, lp.b, lp.m, n)), lp.label).toBeNull();
    }
  });

  it('an empty box (lower bound above upper bound in one coordinate) is infeasible', () => {
    // x1 ≤ 1, −x1 ≤ −2 (x1 ≥ 2), |x2| ≤ 1
    const A = Float64Array.from([1, 0, -1, 0, 0, 1, 0, -1]);
    const b = Float64Array.from([1, -2, 1, 1]);
    expect(lpMaximizeReference(Float64Array.of(1, 1), A, b, 4, 2).status).toBe('infeasible');
    expect(lpMaximize(Float64Array.of(1, 1), A, b, 4, 2).status).toBe('infeasible');
    expect(findFeasiblePoint(A, b, 4, 2)).toBeNull();
  });
});

describe('findFeasiblePoint', () => {
  it('returns a point with A x ≤ b on 100 feasible seeded instances, from 0 and from a far start', () => {
    for (let s = 0; s < 100; s++) {
      const lp = randomLp(families[s % families.length], 9500 + s);
      for (const start of [undefined, Float64Array.from({ length: lp.n }, (_, j) => 50 * (j % 2 ? 1 : -1))]) {
        const x = own(lp.label, () => findFeasiblePoint(lp.A, lp.b, lp.m, lp.n, start));
        expect(x, lp.label).not.toBeNull();
        expect(x!.length).toBe(lp.n);
        expect(maxRowViolation(lp, x!), lp.label).toBeLessThanOrEqual(FEAS);
      }
    }
  });
});

describe('lpMaximizeFrom skip mask: skipped rows are left out of the LP', () => {
  it('worked example: max x+y on [−1,1]² with x+y ≤ 0.5 — 0.5 with the row, 2 when it is skipped', () => {
    // square [−1,1]² (rows 0..3) and the cut x + y ≤ 0.5 (row 4); analytic optima 0.5 and 2
    const A = Float64Array.from([1, 0, -1, 0, 0, 1, 0, -1, 1, 1]);
    const b = Float64Array.from([1, 1, 1, 1, 0.5]);
    const c = Float64Array.of(1, 1);
    const x0 = Float64Array.of(0, 0);
    const kept = lpMaximizeFrom(c, A, b, 5, 2, x0);
    expect(kept.status).toBe('optimal');
    expect(kept.value).toBeCloseTo(0.5, 12);
    const skip = Uint8Array.from([0, 0, 0, 0, 1]);
    const cut = lpMaximizeFrom(c, A, b, 5, 2, x0, skip);
    expect(cut.status).toBe('optimal');
    expect(cut.value).toBeCloseTo(2, 12);
    expect(Array.from(cut.x).map((v) => Math.round(v * 1e9) / 1e9)).toEqual([1, 1]);
    // skipping a box row instead makes the LP unbounded in that direction
    expect(lpMaximizeFrom(c, A, b, 5, 2, x0, Uint8Array.from([1, 0, 0, 0, 1])).status).toBe('unbounded');
  });

  it('the start may violate a skipped row', () => {
    // x ≤ 1, −x ≤ 1, and x ≤ −5 (violated by the start 0, skipped)
    const A = Float64Array.from([1, -1, 1]);
    const b = Float64Array.from([1, 1, -5]);
    const r = lpMaximizeFrom(Float64Array.of(1), A, b, 3, 1, Float64Array.of(0), Uint8Array.from([0, 0, 1]));
    expect(r.status).toBe('optimal');
    expect(r.value).toBeCloseTo(1, 12);
  });

  it('= javascript-lp-solver on the kept rows, 100 seeded instances with random masks (box rows always kept)', () => {
    let cutsThatMattered = 0;
    for (let s = 0; s < 100; s++) {
      const r = rng(9900 + s);
      const lp = randomLp(families[s % families.length], 9900 + s);
      // box rows are the ±e_j rows; keep them so every masked LP stays bounded
      const isBox = (i: number) => {
        const row = Array.from(lp.A.subarray(i * lp.n, (i + 1) * lp.n));
        return row.filter((v) => v !== 0).length === 1 && row.some((v) => Math.abs(v) === 1);
      };
      const skip = new Uint8Array(lp.m);
      const kept: number[] = [];
      for (let i = 0; i < lp.m; i++) {
        if (!isBox(i) && r() < 0.5) skip[i] = 1;
        else kept.push(i);
      }
      const sub = new Float64Array(kept.length * lp.n);
      const subB = new Float64Array(kept.length);
      kept.forEach((q, i) => {
        sub.set(lp.A.subarray(q * lp.n, (q + 1) * lp.n), i * lp.n);
        subB[i] = lp.b[q];
      });
      const ref = lpMaximizeReference(lp.c, sub, subB, kept.length, lp.n);
      const full = lpMaximizeReference(lp.c, lp.A, lp.b, lp.m, lp.n);
      const got = own(lp.label, () => lpMaximizeFrom(lp.c, lp.A, lp.b, lp.m, lp.n, lp.interior!, skip));
      expect(got.status, lp.label).toBe('optimal');
      expect(Math.abs(got.value - ref.value), `${lp.label}: masked value ${got.value} vs reference ${ref.value}`).toBeLessThanOrEqual(VALUE_REL * (1 + Math.abs(ref.value)));
      expect(maxRowViolation(lp, got.x, skip), lp.label).toBeLessThanOrEqual(FEAS);
      if (ref.value > full.value + 1e-6 * (1 + Math.abs(full.value))) cutsThatMattered++;
    }
    // the masks must actually change the answer in many instances, or this test checks nothing
    expect(cutsThatMattered).toBeGreaterThan(30);
  });
});

describe('chebyshevBall', () => {
  it('box: radius = half the smallest width, centre ≥ r from every face (analytic), 60 seeded boxes in 1..6 dimensions', () => {
    for (let s = 0; s < 60; s++) {
      const r = rng(12000 + s);
      const n = 1 + (s % 6);
      const lo = randVec(r, n, 3);
      const width = Array.from({ length: n }, () => uni(r, 0.01, 5));
      const bld = new Builder(n);
      bld.box(lo.map((l, j) => l + width[j] / 2), width.map((w) => w / 2));
      // scale each row by a positive factor: the ball must not change
      bld.rows.forEach((row, i) => {
        const k = uni(r, 0.2, 5);
        bld.rows[i] = row.map((v) => k * v);
        bld.rhs[i] *= k;
      });
      const lp = bld.build(`box seed ${12000 + s} n=${n}`, new Array(n).fill(0), null);
      const start = Float64Array.from(randVec(r, n, 20)); // usually outside the box
      const ball = own(lp.label, () => chebyshevBall(lp.A, lp.b, lp.m, n, start, 1e3));
      const expected = Math.min(...width) / 2;
      expect(Math.abs(ball.radius - expected), lp.label).toBeLessThanOrEqual(1e-9 * (1 + expected));
      for (let j = 0; j < n; j++) {
        expect(ball.center[j], lp.label).toBeGreaterThanOrEqual(lo[j] + expected - 1e-9);
        expect(ball.center[j], lp.label).toBeLessThanOrEqual(lo[j] + width[j] - expected + 1e-9);
      }
      const jMin = width.indexOf(Math.min(...width));
      expect(Math.abs(ball.center[jMin] - (lo[jMin] + width[jMin] / 2)), lp.label).toBeLessThanOrEqual(1e-9 * (1 + Math.abs(lo[jMin])));
    }
  });

  it('triangle: radius = 2·area/perimeter and centre = incentre (handbook), 60 seeded triangles', () => {
    let done = 0;
    for (let s = 0; done < 60; s++) {
      const r = rng(13000 + s);
      const P = [randVec(r, 2, 4), randVec(r, 2, 4), randVec(r, 2, 4)];
      const cross = (P[1][0] - P[0][0]) * (P[2][1] - P[0][1]) - (P[1][1] - P[0][1]) * (P[2][0] - P[0][0]);
      const area = Math.abs(cross) / 2;
      if (area < 0.05) continue; // skip slivers
      done++;
      const side = (i: number, k: number) => Math.hypot(P[i][0] - P[k][0], P[i][1] - P[k][1]);
      const a = side(1, 2);
      const bs = side(0, 2);
      const cs = side(0, 1);
      const perimeter = a + bs + cs;
      const inradius = (2 * area) / perimeter;
      const incentre = [0, 1].map((j) => (a * P[0][j] + bs * P[1][j] + cs * P[2][j]) / perimeter);
      // edge through P_i, P_k as an outward half-plane, scaled by a random positive factor
      const bld = new Builder(2);
      for (const [i, k, o] of [[0, 1, 2], [1, 2, 0], [2, 0, 1]]) {
        let nx = P[k][1] - P[i][1];
        let ny = -(P[k][0] - P[i][0]);
        if (nx * (P[o][0] - P[i][0]) + ny * (P[o][1] - P[i][1]) > 0) [nx, ny] = [-nx, -ny];
        const f = uni(r, 0.1, 10);
        bld.add([f * nx, f * ny], f * (nx * P[i][0] + ny * P[i][1]));
      }
      const lp = bld.build(`triangle seed ${13000 + s}`, [0, 0], null);
      const ball = own(lp.label, () => chebyshevBall(lp.A, lp.b, 3, 2, Float64Array.of(10, -10), 1e3));
      expect(Math.abs(ball.radius - inradius), lp.label).toBeLessThanOrEqual(1e-9 * (1 + inradius));
      expect(Math.hypot(ball.center[0] - incentre[0], ball.center[1] - incentre[1]), lp.label).toBeLessThanOrEqual(1e-8);
      expect(maxRowViolation(lp, ball.center) + inradius, `${lp.label}: ball inside`).toBeLessThanOrEqual(FEAS);
    }
  });

  it('the cap binds: unit square with rCap = 0.1 gives radius 0.1 and a centre inside', () => {
    const A = Float64Array.from([1, 0, -1, 0, 0, 1, 0, -1]);
    const b = Float64Array.from([1, 0, 1, 0]); // [0,1]²
    const ball = chebyshevBall(A, b, 4, 2, Float64Array.of(0.5, 0.5), 0.1);
    expect(ball.radius).toBeCloseTo(0.1, 12);
    for (const v of ball.center) {
      expect(v).toBeGreaterThanOrEqual(0.1 - 1e-12);
      expect(v).toBeLessThanOrEqual(0.9 + 1e-12);
    }
  });

  it('empty and flat sets: radius ≤ 0', () => {
    // 0 ≤ x ≤ 1 and x ≥ 2: empty
    const empty = chebyshevBall(Float64Array.from([1, -1, -1]), Float64Array.from([1, 0, -2]), 3, 1, Float64Array.of(0), 10);
    expect(empty.radius).toBeLessThanOrEqual(0);
    // the segment y = 0, 0 ≤ x ≤ 1 in the plane: flat, radius 0
    const flat = chebyshevBall(Float64Array.from([1, 0, -1, 0, 0, 1, 0, -1]), Float64Array.from([1, 0, 0, 0]), 4, 2, Float64Array.of(0.3, 0), 10);
    expect(Math.abs(flat.radius)).toBeLessThanOrEqual(tol.radius);
    // a zero row with a negative bound (0 ≤ −1) can never hold
    const never = chebyshevBall(Float64Array.from([1, 0, 0, 0]), Float64Array.from([1, -1]), 2, 2, Float64Array.of(0, 0), 10);
    expect(never.radius).toBeLessThanOrEqual(0);
  });
});
