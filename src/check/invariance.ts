/**
 * Recursive feasibility of a table on its nominal model, decided exactly, region by region, by LP.
 *
 * The regions of a complete table tile C = K ∩ box, where K is the feasible set of the mpQP: a convex
 * polytope. Its facets are known from the exploration: every region facet whose far side holds no
 * region (`neighbours` empty) lies on the boundary of C; a supporting-hyperplane argument makes its
 * half-space valid for all of C, and C is the intersection of these half-spaces. Two kinds occur:
 *  - non-box facets (the far side is infeasible: a boundary facet of K), and
 *  - box facets where K reaches the box. A box face that no region touches is implied by the
 *    others, so it needs no LP.
 * On a region R with law u = Fθ + g the closed-loop successor is affine:
 *   x⁺ = A x + B u + Bd d,  u_prev⁺ = u,  r⁺ = r,  d⁺ = d   ⇒   θ⁺ = M θ + c.
 * θ⁺ lies in C for every θ in R iff, for every facet (a, β) of C, max { a·(Mθ + c) : θ ∈ R } ≤ β.
 * One LP per (region, facet); a positive excess gives a witness θ (the LP's maximiser), its
 * successor and the facet it crosses. When no LP finds an excess the nominal closed loop never
 * leaves C from inside C: the table is recursively feasible (relative to the box it covers).
 * Reference and disturbance facets are skipped (those entries of θ⁺ equal those of θ).
 * Pure: no file access.
 */
import type { TableFile } from '../table/format.js';
import type { CriticalRegion } from '../mpqp/types.js';
import { lpMaximizeFrom } from '../lp/kernel.js';
import { tol } from '../tol.js';
import type { PlantDynamics } from './simulate.js';

export interface BoundaryFacet {
  a: number[];
  b: number;
  kind: 'primal' | 'dual' | 'box';
  /** the limit behind the facet: the constraint label, or the box bound */
  label: string;
  /** one region that has this facet */
  region: number;
}

/** θ⁺ = M θ + c on one region. */
export interface AffineSuccessor {
  M: number[][];
  c: number[];
}

export interface LeavingRegion {
  region: number;
  /** the facet of C crossed with the largest excess */
  facet: string;
  excess: number;
  /** θ in the region whose successor leaves C */
  witness: number[];
  successor: number[];
  /** every facet of C this region's image crosses */
  facetsCrossed: number;
}

export interface InvarianceReport {
  regions: number;
  /** facets of C found (after removing duplicates), split by kind; `unconfirmed`: facets with no neighbour that other regions lie beyond (dropped) */
  facets: { total: number; boundary: number; box: number; skipped: number; unconfirmed: number };
  /** invariance LPs (regions × facets) */
  lps: number;
  /** LPs that confirmed the facets of C */
  confirmLps: number;
  leaving: LeavingRegion[];
  /** true when no region's image leaves C (and the table is complete) */
  proven: boolean;
  tableComplete: boolean;
  /** the margin an excess must exceed: the point-location slack tol.inside */
  margin: number;
}

function facetKey(a: ArrayLike<number>, b: number): string {
  return [...Array.from(a), b].map((v) => (Math.abs(v) < 1e-9 ? 0 : v).toFixed(7)).join(',');
}

/**
 * The facets of the covered set C: region facets with no neighbour, duplicates removed, each
 * confirmed by LP to bound every region (max a·θ over each region ≤ β + tol.inside). A facet that
 * fails the confirmation has regions on its far side: its neighbour list was incomplete, and it is
 * dropped (counted in `unconfirmed`), so a wrong list can never invent a boundary.
 */
export function boundaryFacets(table: TableFile): { facets: BoundaryFacet[]; unconfirmed: number; lps: number } {
  const candidates = candidateFacets(table);
  const nt = table.dims.ntheta;
  const polys = table.regions.map((r) => {
    const A = new Float64Array(r.A.length * nt);
    r.A.forEach((row, i) => row.forEach((v, j) => (A[i * nt + j] = v)));
    return { A, b: Float64Array.from(r.b), m: r.A.length, start: Float64Array.from(r.chebyshev.center), c: r.chebyshev.center, rad: r.chebyshev.radius, r };
  });
  let lps = 0;
  const facets = candidates.filter((f) => {
    const cvec = Float64Array.from(f.a);
    for (const p of polys) {
      // the Chebyshev centre beyond the plane refutes the facet without an LP
      let ac = 0;
      for (let j = 0; j < nt; j++) ac += f.a[j] * p.c[j];
      if (ac > f.b + tol.inside) return false;
      const res = lpMaximizeFrom(cvec, p.A, p.b, p.m, nt, p.start);
      lps++;
      if (res.status === 'optimal' && res.value > f.b + tol.inside) return false;
    }
    return true;
  });
  return { facets, unconfirmed: candidates.length - facets.length, lps };
}

function candidateFacets(table: TableFile): BoundaryFacet[] {
  const seen = new Map<string, BoundaryFacet>();
  table.regions.forEach((r, ri) =>
    r.facets.forEach((f, fi) => {
      if (f.neighbours.length) return;
      const a = r.A[fi];
      const key = facetKey(a, r.b[fi]);
      if (seen.has(key)) return;
      let label: string;
      if (f.kind === 'box') {
        const j = f.row;
        label = `${table.thetaNames[j]} ${a[j] > 0 ? '<=' : '>='} ${a[j] > 0 ? table.box.upper[j] : table.box.lower[j]} (box)`;
      } else label = f.kind === 'primal' ? (table.constraints[f.row] ?? `row ${f.row}`) : `multiplier of ${table.constraints[f.row] ?? `row ${f.row}`} = 0`;
      seen.set(key, { a: [...a], b: r.b[fi], kind: f.kind, label, region: ri });
    }),
  );
  return [...seen.values()];
}

/** The closed-loop successor map on a region, from the table's θ layout and the plant. */
export function successorMap(table: TableFile, plant: PlantDynamics, region: Pick<CriticalRegion, 'law'>): AffineSuccessor {
  const nt = table.dims.ntheta;
  const M = Array.from({ length: nt }, () => new Array<number>(nt).fill(0));
  const c = new Array<number>(nt).fill(0);
  const { F, g } = region.law;
  const blocks = table.layout.theta;
  const stateBlock = blocks.find((b) => b.kind === 'state');
  const distBlock = blocks.find((b) => b.kind === 'disturbance');
  if (!stateBlock) throw new Error('the table has no state block: not an MPC table');
  const stateCol = new Map<number, number>(stateBlock.refersTo.map((s, i) => [s, stateBlock.offset + i]));
  for (const blk of blocks) {
    for (let i = 0; i < blk.size; i++) {
      const row = blk.offset + i;
      if (blk.kind === 'state') {
        const s = blk.refersTo[i];
        plant.A[s].forEach((a, s2) => (M[row][stateCol.get(s2)!] += a));
        plant.B[s].forEach((bv, q) => {
          for (let j = 0; j < nt; j++) M[row][j] += bv * F[q][j];
          c[row] += bv * g[q];
        });
        if (plant.Bd && distBlock) plant.Bd[s].forEach((bv, q) => (M[row][distBlock.offset + distBlock.refersTo.indexOf(q)] += bv));
      } else if (blk.kind === 'inputPrev') {
        const q = blk.refersTo[i];
        for (let j = 0; j < nt; j++) M[row][j] = F[q][j];
        c[row] = g[q];
      } else M[row][row] = 1; // r and d are held
    }
  }
  return { M, c };
}

/** Is a facet's normal supported only on held entries (reference/disturbance)? Then θ⁺ keeps a·θ. */
function heldOnly(table: TableFile, a: number[]): boolean {
  const held = new Set<number>();
  for (const b of table.layout.theta) if (b.kind === 'reference' || b.kind === 'disturbance') for (let i = 0; i < b.size; i++) held.add(b.offset + i);
  return a.every((v, j) => Math.abs(v) < 1e-12 || held.has(j));
}

/**
 * Exact one-step recursive feasibility of the covered set, region by region, by LP: for each region
 * the affine successor θ⁺ under its law and the plant must stay inside every boundary facet of the
 * covered set. Returns the regions that can leave, with witnesses in θ units.
 */
export function checkInvariance(table: TableFile, plant: PlantDynamics, onProgress?: (done: number, total: number) => void): InvarianceReport {
  const nt = table.dims.ntheta;
  const found = boundaryFacets(table);
  const all = found.facets;
  const facets = all.filter((f) => !heldOnly(table, f.a));
  const margin = tol.inside;
  let lps = 0;
  const leaving: LeavingRegion[] = [];
  const cvec = new Float64Array(nt);
  table.regions.forEach((r, ri) => {
    onProgress?.(ri, table.regions.length);
    const { M, c } = successorMap(table, plant, r);
    const m = r.A.length;
    const A = new Float64Array(m * nt);
    r.A.forEach((row, i) => row.forEach((v, j) => (A[i * nt + j] = v)));
    const b = Float64Array.from(r.b);
    const start = Float64Array.from(r.chebyshev.center);
    let worst: LeavingRegion | null = null;
    let crossed = 0;
    for (const f of facets) {
      // objective aᵀM, constant a·c
      let a0 = 0;
      for (let i = 0; i < nt; i++) a0 += f.a[i] * c[i];
      for (let j = 0; j < nt; j++) {
        let s = 0;
        for (let i = 0; i < nt; i++) s += f.a[i] * M[i][j];
        cvec[j] = s;
      }
      const res = lpMaximizeFrom(cvec, A, b, m, nt, start);
      lps++;
      if (res.status !== 'optimal') throw new Error(`invariance LP on region ${r.id} ended ${res.status}`);
      const excess = res.value + a0 - f.b;
      if (excess > margin) {
        crossed++;
        if (!worst || excess > worst.excess) {
          const w = Array.from(res.x);
          const succ = M.map((row, i) => row.reduce((s, v, j) => s + v * w[j], c[i]));
          worst = { region: r.id, facet: f.label, excess, witness: w, successor: succ, facetsCrossed: 0 };
        }
      }
    }
    if (worst) leaving.push({ ...worst, facetsCrossed: crossed });
  });
  const box = facets.filter((f) => f.kind === 'box').length;
  return {
    regions: table.regions.length,
    facets: { total: facets.length, boundary: facets.length - box, box, skipped: all.length - facets.length, unconfirmed: found.unconfirmed },
    lps,
    confirmLps: found.lps,
    leaving,
    proven: leaving.length === 0 && table.stats.complete !== false,
    tableComplete: table.stats.complete !== false,
    margin,
  };
}
