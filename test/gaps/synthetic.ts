import { TABLE_VERSION } from '../../src/table/format.js';
import { plainLayout } from '../../src/formulation/layout.js';
/**
 * A synthetic table whose exact answer is known in closed form, for geometry tests that must not
 * depend on the engine.
 *
 * mpQP (scalar move z, s = cᵀθ):  min ½ z² + z s   s.t.  −1 ≤ z ≤ 1,  z ≥ s − 2.
 * Feasible iff s ≤ 3. Optimal law by the KKT conditions of a scalar QP (first-order optimality
 * with one bound active at a time, textbook):
 *   s ≤ −1 : z = 1      (upper bound active)
 *   −1 ≤ s ≤ 1 : z = −s (unconstrained)
 *   1 ≤ s ≤ 3 : z = s − 2 (ramp bound active)
 * Each band is cut into strips by dᵀθ = breakpoints, so that one law spans several regions.
 */
import type { CriticalRegion, MpqpProblem } from '../../src/mpqp/types.js';
import type { TableFile } from '../../src/table/format.js';
import { chebyshevBall } from '../../src/lp/kernel.js';

export interface SyntheticOptions {
  c: number[]; // s = cᵀθ
  d: number[]; // strip direction
  cuts: number[]; // strip breakpoints of dᵀθ
  lower: number[];
  upper: number[];
}

export const default2d: SyntheticOptions = { c: [1, 1], d: [1, -1], cuts: [-2, 0, 2], lower: [-2, -2], upper: [2, 2] };
export const default3d: SyntheticOptions = { c: [1, 1, 0.5], d: [1, -1, 0.25], cuts: [-1.5, 0, 1.5], lower: [-2, -2, -1], upper: [2, 2, 1] };

export function syntheticProblem(o: SyntheticOptions): MpqpProblem {
  const nt = o.c.length;
  const E = new Float64Array(3 * nt);
  for (let k = 0; k < nt; k++) E[2 * nt + k] = -o.c[k];
  return {
    nz: 1,
    ntheta: nt,
    lawSize: 1,
    nc: 3,
    H: Float64Array.of(1),
    F: Float64Array.from(o.c),
    c: new Float64Array(1),
    Y: new Float64Array(nt * nt),
    G: Float64Array.of(1, -1, -1),
    w: Float64Array.of(1, 1, 2),
    E,
    box: { lower: Float64Array.from(o.lower), upper: Float64Array.from(o.upper) },
    labels: ['u1(0) <= 1', 'u1(0) >= -1', 'u1(0) >= s - 2'],
    mergedFrom: [[0], [1], [2]],
    thetaNames: Array.from({ length: nt }, (_, k) => `x${k + 1}`),
    lawNames: ['u1'],
  };
}

const dot = (a: number[], b: ArrayLike<number>) => a.reduce((s, v, k) => s + v * b[k], 0);

function region(id: number, rows: { a: number[]; b: number; kind: 'primal' | 'dual' | 'box'; row: number }[], law: { F: number[]; g: number }, active: number[], o: SyntheticOptions): CriticalRegion | null {
  const nt = o.c.length;
  const A: number[][] = [];
  const b: number[] = [];
  for (const r of rows) {
    const n = Math.hypot(...r.a);
    A.push(r.a.map((v) => v / n));
    b.push(r.b / n);
  }
  const Af = Float64Array.from(A.flat());
  const bf = Float64Array.from(b);
  const start = Float64Array.from(o.lower.map((lo, k) => (lo + o.upper[k]) / 2));
  const ball = chebyshevBall(Af, bf, A.length, nt, start, 10);
  if (!(ball.radius > 1e-6)) return null;
  const cc = o.c;
  const Q = (k: number) => cc.map((ci) => cc.map((cj) => k * ci * cj));
  const value =
    active[0] === 0
      ? { Q: Q(0), q: cc.slice(), r: 0.5 }
      : active.length === 0
        ? { Q: Q(-0.5), q: cc.map(() => 0), r: 0 }
        : { Q: Q(1.5), q: cc.map((v) => -4 * v), r: 2 };
  return {
    id,
    activeSet: active,
    A,
    b,
    facets: rows.map((r) => ({ kind: r.kind, row: r.row, neighbours: [] })),
    chebyshev: { center: Array.from(ball.center), radius: ball.radius },
    law: { F: [law.F], g: [law.g] },
    moves: { F: [law.F], g: [law.g] },
    value,
  };
}

export function syntheticTable(o: SyntheticOptions, name = 'synthetic-ramp'): TableFile {
  const nt = o.c.length;
  const neg = (v: number[]) => v.map((x) => -x);
  const boxRows = o.lower.flatMap((lo, k) => {
    const e = o.c.map((_, j) => (j === k ? 1 : 0));
    return [
      { a: e, b: o.upper[k], kind: 'box' as const, row: k },
      { a: neg(e), b: -lo, kind: 'box' as const, row: k },
    ];
  });
  const bands = [
    { lo: -Infinity, hi: -1, law: { F: o.c.map(() => 0), g: 1 }, active: [0] },
    { lo: -1, hi: 1, law: { F: neg(o.c), g: 0 }, active: [] as number[] },
    { lo: 1, hi: 3, law: { F: o.c.slice(), g: -2 }, active: [2] },
  ];
  const strips = [-Infinity, ...o.cuts, Infinity];
  const regions: CriticalRegion[] = [];
  for (const band of bands)
    for (let k = 0; k + 1 < strips.length; k++) {
      const rows = boxRows.slice();
      if (band.lo > -Infinity) rows.push({ a: neg(o.c), b: -band.lo, kind: 'primal', row: 2 });
      if (band.hi < Infinity) rows.push({ a: o.c.slice(), b: band.hi, kind: band.hi === 3 ? 'primal' : 'dual', row: 2 });
      if (strips[k] > -Infinity) rows.push({ a: neg(o.d), b: -strips[k], kind: 'dual', row: 1 });
      if (strips[k + 1] < Infinity) rows.push({ a: o.d.slice(), b: strips[k + 1], kind: 'dual', row: 1 });
      const r = region(regions.length, rows, band.law, band.active, o);
      if (r) regions.push(r);
    }
  return {
    format: 'tessera-table',
    version: TABLE_VERSION,
    lean: false,
    name,
    problem: null,
    problemHash: 'sha256:synthetic',
    layout: plainLayout(Array.from({ length: nt }, (_, k) => `x${k + 1}`), ['u1']),
    thetaNames: Array.from({ length: nt }, (_, k) => `x${k + 1}`),
    inputNames: ['u1'],
    box: { lower: o.lower.slice(), upper: o.upper.slice() },
    inputLimits: { lower: [-1], upper: [1] },
    constraints: ['u1(0) <= 1', 'u1(0) >= -1', 'u1(0) >= s - 2'],
    dims: { ntheta: nt, nu: 1, nz: 1, nc: 3 },
    tolerances: {},
    regions,
    stats: { regions: regions.length, candidates: regions.length, lps: 0, qps: 0, complete: true, stopReason: 'done' },
  };
}

/** The table with one region removed (a deliberate hole). */
export function withoutRegion(t: TableFile, index: number): { table: TableFile; removed: CriticalRegion } {
  const regions = t.regions.slice();
  const [removed] = regions.splice(index, 1);
  return { table: { ...t, regions, stats: { ...t.stats, regions: regions.length } }, removed };
}

export { dot };
