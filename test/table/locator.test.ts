/**
 * The location rule shared by evaluate, gaps, certify, maps, simulate and audit: a region that holds
 * θ exactly wins over one that holds it only within the slack tol.inside, and among slack-only
 * candidates the least largest residual wins. Reference: the rule of strict containment before
 * tolerance, worked out by hand on half-lines (common practice); the residuals below are exact
 * arithmetic on the numbers written here.
 */
import { describe, expect, it } from 'vitest';
import { GridLocator, locatePoint, locateRegion, locateScan } from '../../src/table/locator.js';
import { evaluateTable, locateSequential } from '../../src/table/table.js';
import type { CriticalRegion } from '../../src/mpqp/types.js';
import type { TableFile } from '../../src/table/format.js';
import { tol } from '../../src/tol.js';
import { rng } from '../helpers/solved.js';

type Half = Pick<CriticalRegion, 'A' | 'b' | 'chebyshev'>;
/** the half-plane {θ : s·θ1 ≤ c} of the box [−1, 1]², as a region */
const half = (s: number, c: number): Half => ({ A: [[s, 0]], b: [c], chebyshev: { center: [s > 0 ? c - 0.5 : c + 0.5, 0], radius: 0.5 } });
const box = { lower: [-1, -1], upper: [1, 1] };
// region 0 = B: θ1 ≤ 0; region 1 = A: θ1 ≥ 0; region 2 = C: θ1 ≥ 1e-8 (a thin overlap/gap pattern)
const regions: Half[] = [half(1, 0), half(-1, 0), half(-1, -1e-8)];

describe('point location: exact containment before the slack', () => {
  it('a point inside A but within slack of B (lower index) gets A', () => {
    const th = [5e-9, 0.3]; // B's residual 5e-9 ≤ tol.inside = 1e-8; A's residual −5e-9 ≤ 0
    expect(tol.inside).toBe(1e-8);
    expect(locateScan(regions.slice(0, 2), th).region).toBe(1);
    expect(locateSequential(regions.slice(0, 2) as CriticalRegion[], th)).toBe(1);
    expect(locateRegion(regions.slice(0, 2), th, tol.inside, box)).toBe(1);
    const g = new GridLocator(box.lower, box.upper);
    g.add([[1, 0]], [0], [-1, -1], [0, 1]);
    g.add([[-1, 0]], [0], [0, -1], [1, 1]);
    expect(g.locate(th, tol.inside)).toBe(1);
    expect(g.lastViolation).toBeCloseTo(-5e-9, 20);
  });

  it('on the shared facet itself (both exact) the lower index wins', () => {
    expect(locateScan(regions.slice(0, 2), [0, 0.1]).region).toBe(0);
  });

  it('no exact holder: the least residual within the slack wins, whatever the order', () => {
    // only B (θ1 ≤ 0) and C (θ1 ≥ 1e-8): the gap 0 < θ1 < 1e-8 is held by the slack only
    const bc = [regions[0], regions[2]];
    expect(locatePoint(bc, [3e-9, 0], tol.inside, box)).toEqual({ region: 0, violation: 3e-9 });
    const r = locatePoint(bc, [7e-9, 0], tol.inside, box);
    expect(r.region).toBe(1);
    expect(r.violation).toBeCloseTo(3e-9, 20);
    // beyond the slack of every region: none
    expect(locateScan([regions[0]], [2e-8, 0]).region).toBe(-1);
    expect(locateScan(regions, [NaN, 0]).region).toBe(-1);
  });

  it('the grid index (used after a few queries on ≥ 32 regions) follows the same rule as the scan', () => {
    // 40 vertical strips of width 0.05 over θ1 ∈ [−1, 1], each with its own law u = k
    const strips: CriticalRegion[] = [];
    for (let k = 0; k < 40; k++) {
      const lo = -1 + 0.05 * k;
      const hi = lo + 0.05;
      strips.push({ A: [[-1, 0], [1, 0]], b: [-lo, hi], chebyshev: { center: [(lo + hi) / 2, 0], radius: 0.025 } } as unknown as CriticalRegion);
    }
    const table = { dims: { ntheta: 2 }, box, regions: strips.map((r, k) => ({ ...r, law: { F: [[0, 0]], g: [k] } })) } as unknown as TableFile;
    // warm the cache so the grid locator is built, then query just right of every inner strip border
    for (let i = 0; i < 20; i++) evaluateTable(table, [0.01, 0]);
    for (let k = 1; k < 40; k++) {
      const border = -1 + 0.05 * k;
      const th = [border + 4e-9, 0.2];
      // strip k holds θ exactly (residual ≤ 0); strip k−1 only within the slack
      const exactK = strips[k].A.every((a, i) => a[0] * th[0] - strips[k].b[i] <= 0);
      const e = evaluateTable(table, th);
      expect(exactK).toBe(true);
      expect(e.u).toEqual([k]);
      expect(e.region).toBe(locateScan(table.regions, th).region);
    }
  });
});

describe('point location with a negative slack (strict interior, as the exploration asks)', () => {
  it('holds θ only when every row is at most b + slack', () => {
    // worked by hand: θ1 = −0.1 is 0.1 inside B (θ1 ≤ 0) and 0.1 outside A
    expect(locateScan(regions.slice(0, 2), [-0.1, 0], -0.05).region).toBe(0);
    expect(locateScan(regions.slice(0, 2), [-0.01, 0], -0.05).region).toBe(-1);
    const g = new GridLocator(box.lower, box.upper);
    g.add([[1, 0]], [0], [-1, -1], [0, 1]);
    g.add([[-1, 0]], [0], [0, -1], [1, 1]);
    expect(g.locate([-0.1, 0], -0.05)).toBe(0);
    expect(g.locate([-0.01, 0], -0.05)).toBe(-1);
    expect(g.locate([0.01, 0], -0.05)).toBe(-1);
  });
});

describe('GridLocator: a region whose padded box misses θ still counts within the slack (sharp corner)', () => {
  it('a wedge of half-angle 1e-4 holds a point 5e-5 before its apex within tol.inside, beyond its box + 1e-5', () => {
    // worked by hand (common practice): rows (−sin α, ±cos α)·θ ≤ 0 bound the wedge |θ2| ≤ θ1·tan α,
    // whose box is θ1 ∈ [0, 1]; at θ = (−d, 0) both residuals are d·sin α = 5e-9 ≤ 1e-8, while the
    // locator pads boxes by 1e3·tol.inside = 1e-5 < d. The box pretest must not drop it there.
    const a = 1e-4;
    const s = Math.sin(a);
    const c = Math.cos(a);
    const wedge: Half = { A: [[-s, c], [-s, -c]], b: [0, 0], chebyshev: { center: [0.5, 0], radius: 0.5 * Math.sin(a) } };
    const far: Half = half(-1, -0.9); // θ1 ≥ 0.9: another region, never near θ
    const g = new GridLocator(box.lower, box.upper);
    g.add(far.A, far.b, [0.9, -1], [1, 1]);
    g.add(wedge.A, wedge.b, [0, -Math.tan(a)], [1, Math.tan(a)]);
    const th = [-5e-5, 0];
    expect(locateScan([far, wedge], th).region).toBe(1);
    expect(g.locate(th, tol.inside)).toBe(1);
    expect(g.lastViolation).toBeCloseTo(5e-5 * s, 20);
    // no slack: nothing holds it; inside the wedge: the wedge, exactly
    expect(g.locate(th, 0)).toBe(-1);
    expect(g.locate([0.5, 0], tol.inside)).toBe(1);
    expect(g.lastViolation).toBeLessThanOrEqual(0);
  });
});

describe('GridLocator: the row that last put a query outside a region is tried first', () => {
  it('answers and residuals (bit for bit) equal the rule written out over every region, along a walk of queries', () => {
    // Reference: the location rule as stated (common practice), coded literally here with
    // ECMAScript arithmetic: a region holds θ exactly when every a·θ − b (Σ in axis order, then −b)
    // is ≤ min(0, slack); the lowest such id wins; else the least largest residual ≤ slack (ties:
    // lowest id); the residual reported is the largest over all rows, scanned in row order.
    let seed = 12345;
    const rnd = (): number => {
      seed = (seed * 16807) % 2147483647;
      return seed / 2147483647;
    };
    for (const n of [2, 3, 4]) {
      const lo = new Array<number>(n).fill(-1);
      const hi = new Array<number>(n).fill(1);
      const g = new GridLocator(lo, hi);
      const regs: { A: number[][]; b: number[] }[] = [];
      // random simplices-like cells: rows through random points around a random centre (some overlapping, some thin)
      for (let r = 0; r < 60; r++) {
        const c = lo.map(() => rnd() * 1.8 - 0.9);
        const A: number[][] = [];
        const b: number[] = [];
        const m = n + 1 + Math.floor(rnd() * 6);
        for (let i = 0; i < m; i++) {
          const a = lo.map(() => rnd() - 0.5);
          const nrm = Math.hypot(...a);
          const ai = a.map((v) => v / nrm);
          A.push(ai);
          b.push(ai.reduce((s, v, j) => s + v * c[j], 0) + 0.02 + 0.3 * rnd());
        }
        regs.push({ A, b });
        g.add(A, b, lo, hi); // whole box as bounding box: every region listed wherever θ is
      }
      const rule = (th: number[], slack: number): { region: number; v: number } => {
        const res = regs.map(({ A, b }) => {
          let worst = -Infinity;
          for (let i = 0; i < A.length; i++) {
            let s = 0;
            for (let j = 0; j < n; j++) s += A[i][j] * th[j];
            const v = s - b[i];
            if (v > worst) worst = v;
          }
          return worst;
        });
        const exact = res.findIndex((v) => v <= Math.min(0, slack));
        if (exact >= 0) return { region: exact, v: res[exact] };
        let best = -1;
        for (let r = 0; r < res.length; r++) if (res[r] <= slack && (best < 0 || res[r] < res[best])) best = r;
        return { region: best, v: best >= 0 ? res[best] : -Infinity };
      };
      // a walk: small steps (neighbouring queries), jumps, and points on or just off rows
      let th = lo.map(() => 0);
      let checked = 0;
      for (let q = 0; q < 3000; q++) {
        if (q % 50 === 0) th = lo.map(() => rnd() * 2 - 1);
        else th = th.map((v) => Math.max(-1, Math.min(1, v + (rnd() - 0.5) * 0.05)));
        if (q % 7 === 0) {
          // onto a row of a random region, then off by ±3e-9 (within the slack)
          const { A, b } = regs[Math.floor(rnd() * regs.length)];
          const i = Math.floor(rnd() * A.length);
          const d = A[i].reduce((s, v, j) => s + v * th[j], 0) - b[i] + (rnd() < 0.5 ? 3e-9 : -3e-9);
          th = th.map((v, j) => v - d * A[i][j]);
          if (th.some((v) => v < -1 || v > 1)) continue;
        }
        for (const slack of [tol.inside, -1e-3, 0]) {
          const want = rule(th, slack);
          expect(g.locate(th, slack)).toBe(want.region);
          if (want.region >= 0) expect(Object.is(g.lastViolation, want.v)).toBe(true);
          checked++;
        }
      }
      expect(checked).toBeGreaterThan(6000);
    }
  });
});

describe('GridLocator: long cell lists (moved as they grow) give the answers of a scan', () => {
  it('300 overlapping boxes, 3 000 queries: the rule written out here (lowest exact holder, else least residual within slack, ties lowest id)', () => {
    // regions are axis-aligned boxes [l, u] in 2-D (rows ±e_j), many over the same cells, so a cell's
    // list grows past 4, 8, 16, … ids and moves in the pool; the reference is a plain scan in this test
    const rnd = rng(7);
    const grid = new GridLocator([0, 0], [1, 1]);
    const boxes: { lo: number[]; hi: number[] }[] = [];
    for (let k = 0; k < 300; k++) {
      const c = [0.3 + 0.4 * rnd(), 0.3 + 0.4 * rnd()];
      const h = [0.02 + 0.2 * rnd(), 0.02 + 0.2 * rnd()];
      const lo = [c[0] - h[0], c[1] - h[1]];
      const hi = [c[0] + h[0], c[1] + h[1]];
      boxes.push({ lo, hi });
      grid.add([[1, 0], [-1, 0], [0, 1], [0, -1]], [hi[0], -lo[0], hi[1], -lo[1]], lo, hi);
    }
    const residual = (k: number, th: number[]): number => Math.max(th[0] - boxes[k].hi[0], boxes[k].lo[0] - th[0], th[1] - boxes[k].hi[1], boxes[k].lo[1] - th[1]);
    const slack = 1e-3;
    let holders = 0;
    for (let q = 0; q < 3000; q++) {
      const th = [rnd(), rnd()];
      let want = -1;
      for (let k = 0; k < boxes.length && want < 0; k++) if (residual(k, th) <= 0) want = k;
      if (want < 0) {
        let best = Infinity;
        for (let k = 0; k < boxes.length; k++) {
          const v = residual(k, th);
          if (v <= slack && v < best) {
            best = v;
            want = k;
          }
        }
      } else holders++;
      expect(grid.locate(th, slack)).toBe(want);
    }
    expect(holders).toBeGreaterThan(1000);
  });
});
