import { plainLayout } from '../../src/formulation/layout.js';
/**
 * Synthetic tables for the emit tests: valid partitions of a box built without the mpQP engine.
 * - `arrangementTable`: the cells of an arrangement of seeded random hyperplanes (each cell is
 *   convex, the cells tile the box), each with its own affine law.
 * - `gridTable`: a k×k grid of rectangles in 2-D with laws chosen by a callback (for the merge tests).
 */
import { tol } from '../../src/tol.js';
import { chebyshevBall } from '../../src/lp/kernel.js';
import { polytopeVertices } from '../../src/partition/tree-poly.js';
import { locateSequential } from '../../src/table/table.js';
import { seededRandom } from '../../src/emit/sample.js';
import { TABLE_FORMAT, TABLE_VERSION, type TableFile } from '../../src/table/format.js';
import type { CriticalRegion, FacetInfo } from '../../src/mpqp/types.js';

interface Cell {
  A: number[][];
  b: number[];
  kinds: ('box' | 'primal')[];
  rows: number[];
}

function boxCell(lower: number[], upper: number[]): Cell {
  const n = lower.length;
  const A: number[][] = [];
  const b: number[] = [];
  const rows: number[] = [];
  for (let j = 0; j < n; j++) {
    const e = new Array(n).fill(0);
    e[j] = 1;
    A.push(e);
    b.push(upper[j]);
    rows.push(j);
    const f = new Array(n).fill(0);
    f[j] = -1;
    A.push(f);
    b.push(-lower[j]);
    rows.push(j);
  }
  return { A, b, kinds: A.map(() => 'box'), rows };
}

/** Drop rows that touch fewer than n vertices (not a facet). */
function pruneRedundant(c: Cell, n: number): Cell {
  const v = polytopeVertices(c, n, 1e9)!;
  const keep = c.A.map((row, i) => {
    let on = 0;
    for (let k = 0; k < v.length; k += n) {
      let s = 0;
      for (let j = 0; j < n; j++) s += row[j] * v[k + j];
      if (Math.abs(s - c.b[i]) <= 1e-9) on++;
    }
    return on >= n;
  });
  return {
    A: c.A.filter((_, i) => keep[i]),
    b: c.b.filter((_, i) => keep[i]),
    kinds: c.kinds.filter((_, i) => keep[i]),
    rows: c.rows.filter((_, i) => keep[i]),
  };
}

function radiusOf(c: Cell, n: number): { center: number[]; radius: number } {
  const m = c.A.length;
  const A = new Float64Array(m * n);
  c.A.forEach((r, i) => r.forEach((v, j) => (A[i * n + j] = v)));
  const ball = chebyshevBall(A, Float64Array.from(c.b), m, n, new Float64Array(n), 1e6);
  return { center: Array.from(ball.center), radius: ball.radius };
}

function finishTable(name: string, cells: Cell[], lower: number[], upper: number[], laws: (c: { center: number[] }, i: number) => { F: number[][]; g: number[] }, nu: number): TableFile {
  const n = lower.length;
  const regions: CriticalRegion[] = cells.map((c, i) => {
    const ch = radiusOf(c, n);
    const law = laws(ch, i);
    return {
      id: i,
      activeSet: [],
      A: c.A,
      b: c.b,
      facets: c.kinds.map((k, r): FacetInfo => ({ kind: k, row: c.rows[r], neighbours: [] })),
      chebyshev: ch,
      law,
      moves: law,
      value: { Q: lower.map(() => lower.map(() => 0)), q: lower.map(() => 0), r: 0 },
    };
  });
  // neighbours: step just outside the centre of each non-box facet
  regions.forEach((r) => {
    const v = polytopeVertices(r, n, 1e9)!;
    r.A.forEach((row, i) => {
      if (r.facets[i].kind === 'box') return;
      const on: number[][] = [];
      for (let k = 0; k < v.length; k += n) {
        let s = 0;
        for (let j = 0; j < n; j++) s += row[j] * v[k + j];
        if (Math.abs(s - r.b[i]) <= 1e-9) on.push(Array.from(v.subarray(k, k + n)));
      }
      const mid = lower.map((_, j) => on.reduce((s, p) => s + p[j], 0) / on.length);
      const out = mid.map((x, j) => x + 1e-6 * row[j]);
      const nb = locateSequential(regions, out, 0);
      if (nb >= 0 && nb !== r.id) r.facets[i].neighbours = [nb];
    });
  });
  return {
    format: TABLE_FORMAT,
    version: TABLE_VERSION,
    lean: false,
    name,
    problem: { synthetic: name },
    problemHash: 'sha256:synthetic-' + name,
    layout: plainLayout(lower.map((_, j) => `x${j + 1}`), Array.from({ length: nu }, (_, j) => `u${j + 1}`)),
    thetaNames: lower.map((_, j) => `x${j + 1}`),
    inputNames: Array.from({ length: nu }, (_, j) => `u${j + 1}`),
    box: { lower, upper },
    inputLimits: { lower: Array(nu).fill(-1), upper: Array(nu).fill(1) },
    constraints: [],
    dims: { ntheta: n, nu, nz: nu, nc: 0 },
    tolerances: { ...tol },
    regions,
    stats: { regions: regions.length, candidates: regions.length, lps: 0, qps: 0, complete: true, stopReason: 'done', unresolvedPieces: 0 },
  };
}

/** Cells of `planes` seeded random hyperplanes through the box, with random affine laws (nu inputs). */
export function arrangementTable(opts: { lower: number[]; upper: number[]; planes: number; seed: number; nu?: number }): TableFile {
  const { lower, upper } = opts;
  const n = lower.length;
  const nu = opts.nu ?? 1;
  const rnd = seededRandom(opts.seed);
  let cells = [boxCell(lower, upper)];
  for (let p = 0; p < opts.planes; p++) {
    // random unit normal through a random point of the inner half of the box
    const a = lower.map(() => rnd() * 2 - 1);
    const na = Math.hypot(...a);
    for (let j = 0; j < n; j++) a[j] /= na;
    const x0 = lower.map((l, j) => l + (upper[j] - l) * (0.25 + 0.5 * rnd()));
    const b = a.reduce((s, v, j) => s + v * x0[j], 0);
    const next: Cell[] = [];
    for (const c of cells) {
      const v = polytopeVertices(c, n, 1e9)!;
      let lo = Infinity;
      let hi = -Infinity;
      for (let k = 0; k < v.length; k += n) {
        let s = 0;
        for (let j = 0; j < n; j++) s += a[j] * v[k + j];
        lo = Math.min(lo, s);
        hi = Math.max(hi, s);
      }
      if (lo < b - 1e-6 && hi > b + 1e-6) {
        for (const sg of [1, -1]) {
          const piece = pruneRedundant(
            { A: [...c.A, a.map((x) => sg * x)], b: [...c.b, sg * b], kinds: [...c.kinds, 'primal'], rows: [...c.rows, p] },
            n,
          );
          if (radiusOf(piece, n).radius > 1e-5) next.push(piece);
        }
      } else next.push(c);
    }
    cells = next;
  }
  return finishTable(`arrangement-${n}d-${opts.planes}`, cells, lower, upper, () => ({
    F: Array.from({ length: nu }, () => lower.map(() => Math.round((rnd() * 4 - 2) * 1e6) / 1e6 + rnd() * 1e-7)),
    g: Array.from({ length: nu }, () => rnd() * 2 - 1),
  }), nu);
}

/** A k×k grid of rectangles on [0,k]² whose law on cell (i, j) (column i, row j) is given by `law`. */
export function gridTable(k: number, law: (i: number, j: number) => { F: number[][]; g: number[] }): TableFile {
  const cells: Cell[] = [];
  const which: [number, number][] = [];
  for (let j = 0; j < k; j++)
    for (let i = 0; i < k; i++) {
      const c = boxCell([i, j], [i + 1, j + 1]);
      // inner sides are facets to neighbours, not box bounds
      c.kinds = c.A.map((row, r) => {
        const onBox = (row[0] === 1 && i + 1 === k) || (row[0] === -1 && i === 0) || (row[1] === 1 && j + 1 === k) || (row[1] === -1 && j === 0);
        return onBox ? 'box' : 'primal';
      });
      c.rows = c.rows.map((_, r) => r);
      cells.push(c);
      which.push([i, j]);
    }
  return finishTable(`grid-${k}`, cells, [0, 0], [k, k], (_, idx) => law(...which[idx]), 1);
}
