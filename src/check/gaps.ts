/**
 * Coverage of a table: which parts of the parameter box no region covers, and of those which are
 * infeasible (no input sequence meets the constraints, decided by LP) and which are holes
 * (feasible but uncovered: the controller would have no law there).
 *
 * Three views, each with its error stated:
 *  - Monte Carlo over the whole box (seeded), volume fractions with the binomial standard error;
 *  - facet probes: a point just across every non-box facet of every region, so a hole next to a
 *    region is found however thin the Monte Carlo sample is;
 *  - for dim θ = 2, exact areas from the 2-D slice machinery (polygons, no sampling).
 */
import { randomLcg } from 'd3';
import type { CriticalRegion, MpqpProblem } from '../mpqp/types.js';
import type { TableFile } from '../table/format.js';
import { locateRegion } from '../table/locator.js';
import { lpMaximize, findFeasiblePoint } from '../lp/kernel.js';
import { tol } from '../tol.js';
import { area, centroid, ccw, simplifyConvex, type Point, type Polygon } from '../partition/polygon.js';
import { makeSliceSpec, sliceGaps, sliceRegions, type SliceGaps, type SlicePolygon, type SliceSpec } from '../partition/slice.js';
import { polygonHull } from 'd3';

/** θ is feasible when some z has G z ≤ w + E θ (phase-1 LP of the dense kernel). */
export function feasibleAt(problem: MpqpProblem, theta: ArrayLike<number>): boolean {
  const { nc, nz, ntheta, G, w, E } = problem;
  const b = new Float64Array(nc);
  for (let r = 0; r < nc; r++) {
    let s = w[r];
    for (let k = 0; k < ntheta; k++) s += E[r * ntheta + k] * theta[k];
    b[r] = s;
  }
  if (nz === 0) return b.every((v) => v >= -tol.primal);
  return findFeasiblePoint(G, b, nc, nz) !== null;
}

/**
 * The feasible set of the slice, {(x, y) in the rectangle : ∃z, G z ≤ w + E θ(x, y)}, a convex
 * polygon (projection of a polyhedron). Computed exactly by support LPs: start from 8 compass
 * directions, then for each hull edge ask for the farthest point along its outward normal; an edge
 * whose support value equals its own offset is a true edge. Empty array when the slice of the
 * feasible set is empty or has no area.
 */
export function feasibleSlice(problem: MpqpProblem, spec: SliceSpec): Polygon {
  const { nc, nz, ntheta, G, w, E } = problem;
  const [i, j] = spec.axes;
  const n = nz + 2;
  const m = nc + 4;
  const A = new Float64Array(m * n);
  const b = new Float64Array(m);
  for (let r = 0; r < nc; r++) {
    for (let k = 0; k < nz; k++) A[r * n + k] = G[r * nz + k];
    A[r * n + nz] = -E[r * ntheta + i];
    A[r * n + nz + 1] = -E[r * ntheta + j];
    let s = w[r];
    for (let k = 0; k < ntheta; k++) if (k !== i && k !== j) s += E[r * ntheta + k] * spec.fixed[k];
    b[r] = s;
  }
  const { x0, x1, y0, y1 } = spec.rect;
  const box: [number, number, number][] = [
    [1, 0, x1],
    [-1, 0, -x0],
    [0, 1, y1],
    [0, -1, -y0],
  ];
  box.forEach(([a0, a1, c], q) => {
    A[(nc + q) * n + nz] = a0;
    A[(nc + q) * n + nz + 1] = a1;
    b[nc + q] = c;
  });
  const start = findFeasiblePoint(A, b, m, n);
  if (!start) return [];
  const c = new Float64Array(n);
  const support = (d0: number, d1: number): { p: Point; value: number } => {
    c[nz] = d0;
    c[nz + 1] = d1;
    const r = lpMaximize(c, A, b, m, n, start);
    if (r.status !== 'optimal') throw new Error(`support LP of the feasible slice ended ${r.status}`);
    return { p: [r.x[nz], r.x[nz + 1]], value: r.value };
  };
  const pts: Point[] = [];
  for (let q = 0; q < 8; q++) pts.push(support(Math.cos((q * Math.PI) / 4), Math.sin((q * Math.PI) / 4)).p);
  const hull0 = polygonHull(pts);
  const scale = Math.max(x1 - x0, y1 - y0, 1);
  const eps = tol.primal * 100 * scale;
  if (!hull0 || hull0.length < 3) return [];
  let hull = simplifyConvex(ccw(hull0 as Polygon), eps);
  if (hull.length < 3) return [];
  const maxLps = 4 * m + 40;
  let lps = 0;
  for (let e = 0; e < hull.length && lps < maxLps; ) {
    const u = hull[e];
    const v = hull[(e + 1) % hull.length];
    const dx = v[0] - u[0];
    const dy = v[1] - u[1];
    const len = Math.hypot(dx, dy);
    if (len <= eps) {
      e++;
      continue;
    }
    const nx = dy / len;
    const ny = -dx / len;
    const s = support(nx, ny);
    lps++;
    if (s.value > nx * u[0] + ny * u[1] + eps) {
      hull = hull.slice(0, e + 1).concat([s.p], hull.slice(e + 1));
    } else e++;
  }
  hull = simplifyConvex(hull, eps);
  return hull.length >= 3 && area(hull) > 0 ? hull : [];
}

/** A 2-D slice with its gaps classified: what `tessera map` draws and `gaps` measures for dim θ = 2. */
export interface AnalysedSlice {
  spec: SliceSpec;
  polygons: SlicePolygon[];
  feasible: Polygon;
  gaps: SliceGaps;
}

/**
 * Exact 2-D slice of the table on `spec`: region polygons, the feasible set of `problem` on the
 * plane (LP support functions), and the uncovered part split into infeasible and holes, with exact
 * areas in the product of the axis units. New data, owned by the caller.
 */
export function analyseSlice(table: TableFile, problem: MpqpProblem, spec: SliceSpec): AnalysedSlice {
  const polygons = sliceRegions(table.regions, spec);
  const feasible = feasibleSlice(problem, spec);
  return { spec, polygons, feasible, gaps: sliceGaps(spec, polygons, feasible) };
}

export interface Fraction {
  /** estimate of the volume fraction of the box */
  fraction: number;
  /** binomial standard error √(p(1−p)/N) */
  stderr: number;
  /** 95 % upper bound; for zero hits the rule of three, 3/N (common practice) */
  upper95: number;
  count: number;
}

export interface HoleWitness {
  theta: number[];
  /** how it was found */
  source: 'monte-carlo' | 'facet-probe' | 'exact-2d';
  /** region whose facet was crossed (facet probes) */
  fromRegion?: number;
  /** Chebyshev radius of that facet within its hyperplane: a small value marks a small hole */
  facetRadius?: number;
}

export interface CoverageReport {
  name: string;
  thetaNames: string[];
  box: { lower: number[]; upper: number[] };
  tableComplete: boolean;
  monteCarlo: {
    seed: number;
    samples: number;
    requested: number;
    complete: boolean;
    covered: Fraction;
    infeasible: Fraction;
    holes: Fraction;
  };
  facetProbes: { facets: number; holes: number };
  exact2d: null | {
    areas: SliceGaps['areas'];
    holeComponents: number;
    holeComponentAreas: number[];
  };
  /** number of hole witnesses found (all sources); the list below keeps at most maxWitnesses per source */
  holeWitnessCount: number;
  witnesses: HoleWitness[];
  hasHoles: boolean;
}

export interface CoverageOptions {
  samples?: number;
  seed?: number;
  maxWitnesses?: number;
  /** seconds; the Monte Carlo stops early (marked incomplete) when exceeded */
  timeLimit?: number;
  onProgress?: (done: number, total: number) => void;
  /** skip the facet probes */
  noProbes?: boolean;
}

function fraction(count: number, n: number): Fraction {
  const p = n > 0 ? count / n : 0;
  const se = n > 0 ? Math.sqrt((p * (1 - p)) / n) : 0;
  return { fraction: p, stderr: se, upper95: count === 0 ? (n > 0 ? 3 / n : 1) : Math.min(1, p + 1.96 * se), count };
}

/**
 * Coverage of the whole box. Monte Carlo: N uniform points from d3's seeded LCG; each is located
 * in the table, and an uncovered point is classified by the feasibility LP.
 */
export function analyseCoverage(table: TableFile, problem: MpqpProblem, opts: CoverageOptions = {}): CoverageReport {
  const N = opts.samples ?? 20000;
  const seed = opts.seed ?? 1;
  const maxW = opts.maxWitnesses ?? 20;
  const { lower, upper } = table.box;
  const nt = lower.length;
  const rng = randomLcg(seed);
  const witnesses: HoleWitness[] = [];
  let witnessCount = 0;
  const perSource = new Map<string, number>();
  const addWitness = (w: HoleWitness) => {
    witnessCount++;
    const k = perSource.get(w.source) ?? 0;
    perSource.set(w.source, k + 1);
    if (k < maxW) witnesses.push(w);
  };
  let covered = 0;
  let infeasible = 0;
  let holes = 0;
  let done = 0;
  const t0 = Date.now();
  let lastProgress = t0;
  const theta = new Float64Array(nt);
  for (; done < N; done++) {
    for (let k = 0; k < nt; k++) theta[k] = lower[k] + (upper[k] - lower[k]) * rng();
    if (locateRegion(table.regions, theta, tol.inside, table.box) >= 0) covered++;
    else if (!feasibleAt(problem, theta)) infeasible++;
    else {
      holes++;
      addWitness({ theta: Array.from(theta), source: 'monte-carlo' });
    }
    if ((done & 255) === 255) {
      const now = Date.now();
      if (opts.onProgress && now - lastProgress > 100) {
        opts.onProgress(done + 1, N);
        lastProgress = now;
      }
      if (opts.timeLimit !== undefined && (now - t0) / 1000 > opts.timeLimit) {
        done++;
        break;
      }
    }
  }
  const probes = opts.noProbes ? { facets: 0, holes: 0 } : facetProbes(table, problem, addWitness);

  let exact2d: CoverageReport['exact2d'] = null;
  if (nt === 2) {
    const s = analyseSlice(table, problem, makeSliceSpec(table.box, [0, 1]));
    const compAreas = s.gaps.holeGroups.map((g) => g.reduce((a, q) => a + area(s.gaps.holes[q]), 0));
    exact2d = { areas: s.gaps.areas, holeComponents: s.gaps.holeGroups.length, holeComponentAreas: compAreas };
    for (const g of s.gaps.holeGroups) {
      const biggest = g.reduce((a, q) => (area(s.gaps.holes[q]) > area(s.gaps.holes[a]) ? q : a), g[0]);
      const [x, y] = centroid(s.gaps.holes[biggest]);
      addWitness({ theta: [x, y], source: 'exact-2d' });
    }
  }
  return {
    name: table.name,
    thetaNames: table.thetaNames,
    box: table.box,
    tableComplete: table.stats?.complete !== false,
    monteCarlo: {
      seed,
      samples: done,
      requested: N,
      complete: done >= N,
      covered: fraction(covered, done),
      infeasible: fraction(infeasible, done),
      holes: fraction(holes, done),
    },
    facetProbes: probes,
    exact2d,
    holeWitnessCount: witnessCount,
    witnesses,
    hasHoles: witnessCount > 0,
  };
}

/**
 * For every non-box facet: its Chebyshev centre within the facet (LP), stepped just across; an
 * uncovered feasible landing point is a hole witness.
 */
function facetProbes(table: TableFile, problem: MpqpProblem, add: (w: HoleWitness) => void): { facets: number; holes: number } {
  const { lower, upper } = table.box;
  const nt = lower.length;
  const diam = Math.hypot(...lower.map((lo, k) => upper[k] - lo));
  let facets = 0;
  let holes = 0;
  table.regions.forEach((reg: CriticalRegion, ri) => {
    reg.A.forEach((af, f) => {
      const kind = reg.facets?.[f]?.kind;
      if (kind === 'box') return;
      facets++;
      const c = facetCentre(reg, f);
      if (!c) return;
      const step = Math.min(c.radius / 2, tol.facetStep * (1 + diam));
      const p = c.center.map((v, k) => v + step * af[k]);
      if (p.some((v, k) => v < lower[k] || v > upper[k])) return;
      if (locateRegion(table.regions, p, tol.inside, table.box) >= 0) return;
      if (!feasibleAt(problem, p)) return;
      holes++;
      add({ theta: p, source: 'facet-probe', fromRegion: reg.id, facetRadius: c.radius });
    });
  });
  void nt;
  return { facets, holes };
}

/** Chebyshev centre of facet f of the region, within the facet's hyperplane: max r s.t. a_k θ + r ≤ b_k (k ≠ f), a_f θ = b_f. */
export function facetCentre(reg: Pick<CriticalRegion, 'A' | 'b' | 'chebyshev'>, f: number): { center: number[]; radius: number } | null {
  const m0 = reg.A.length;
  const nt = reg.A[0].length;
  const n = nt + 1;
  const m = m0 + 2; // the facet row as two inequalities, plus r ≤ cap
  const A = new Float64Array((m + 1) * n);
  const b = new Float64Array(m + 1);
  const af = reg.A[f];
  const nf = Math.hypot(...af) || 1;
  let row = 0;
  for (let k = 0; k < m0; k++) {
    if (k === f) continue;
    const nk = Math.hypot(...reg.A[k]) || 1;
    for (let q = 0; q < nt; q++) A[row * n + q] = reg.A[k][q];
    A[row * n + nt] = nk;
    b[row++] = reg.b[k];
  }
  for (let q = 0; q < nt; q++) {
    A[row * n + q] = af[q];
    A[(row + 1) * n + q] = -af[q];
  }
  b[row] = reg.b[f];
  b[row + 1] = -reg.b[f];
  row += 2;
  const cap = Math.max(1, Math.abs(reg.chebyshev?.radius ?? 1)) * 10;
  A[row * n + nt] = 1;
  b[row] = cap;
  row++;
  // start: the region's Chebyshev centre projected onto the facet plane
  const c0 = reg.chebyshev?.center ?? new Array(nt).fill(0);
  const off = (c0.reduce((s, v, q) => s + v * af[q], 0) - reg.b[f]) / (nf * nf);
  const x0 = new Float64Array(n);
  for (let q = 0; q < nt; q++) x0[q] = c0[q] - off * af[q];
  let rMin = cap;
  for (let k = 0; k < row - 3; k++) {
    let s = 0;
    for (let q = 0; q < nt; q++) s += A[k * n + q] * x0[q];
    rMin = Math.min(rMin, (b[k] - s) / A[k * n + nt]);
  }
  x0[nt] = rMin - 1e-9 * (1 + Math.abs(rMin));
  const c = new Float64Array(n);
  c[nt] = 1;
  const r = lpMaximize(c, A, b, row, n, x0);
  if (r.status !== 'optimal' || r.x[nt] <= tol.radius) return null;
  return { center: Array.from(r.x.subarray(0, nt)), radius: r.x[nt] };
}
