/**
 * 2-D slices of a partition: every θ entry except two is fixed, each critical region
 * {θ : Aθ ≤ b} becomes the convex polygon {(x, y) : A_i x + A_j y ≤ b − Σ_{k≠i,j} A_k θ_k}
 * inside the slice rectangle, computed exactly by half-plane clipping (no sampling).
 */
import type { CriticalRegion } from '../mpqp/types.js';
import { tol } from '../tol.js';
import {
  area,
  clipHalfPlane,
  clipHalfPlanes,
  complementPieces,
  connectedComponents,
  edgeHalfPlanes,
  rectangle,
  subtractConvex,
  thickness,
  type HalfPlane,
  type Polygon,
} from './polygon.js';

export interface SliceSpec {
  /** the two θ indices on the horizontal and vertical axis */
  axes: [number, number];
  /** full θ vector; entries axes[0], axes[1] are ignored */
  fixed: number[];
  /** slice rectangle: the parameter box in the two axes */
  rect: { x0: number; x1: number; y0: number; y1: number };
}

export interface SlicePolygon {
  /** index into the region list */
  index: number;
  id: number;
  polygon: Polygon;
  area: number;
}

/** A slice plane through the box: fixed entries default to the box midpoint. */
export function makeSliceSpec(
  box: { lower: number[]; upper: number[] },
  axes: [number, number],
  fixedValues: Map<number, number> = new Map(),
): SliceSpec {
  const fixed = box.lower.map((lo, k) => fixedValues.get(k) ?? (lo + box.upper[k]) / 2);
  const [i, j] = axes;
  return { axes, fixed, rect: { x0: box.lower[i], x1: box.upper[i], y0: box.lower[j], y1: box.upper[j] } };
}

/** Lift a slice point (x, y) to the full θ vector. */
export function liftPoint(spec: SliceSpec, x: number, y: number): number[] {
  const th = spec.fixed.slice();
  th[spec.axes[0]] = x;
  th[spec.axes[1]] = y;
  return th;
}

/**
 * The 2-D half-planes of {Aθ ≤ b} on the slice plane. Rows that do not involve the two axes
 * become constants: a violated one (beyond tol.inside) makes the slice empty (returns null).
 */
export function sliceHalfPlanes(A: ArrayLike<ArrayLike<number>>, b: ArrayLike<number>, spec: SliceSpec): HalfPlane[] | null {
  const [i, j] = spec.axes;
  const hs: HalfPlane[] = [];
  for (let r = 0; r < b.length; r++) {
    const row = A[r];
    let c = b[r];
    for (let k = 0; k < row.length; k++) if (k !== i && k !== j) c -= row[k] * spec.fixed[k];
    const a0 = row[i];
    const a1 = row[j];
    const nrm = Math.hypot(a0, a1);
    if (nrm <= tol.rank) {
      if (c < -tol.inside) return null;
      continue;
    }
    hs.push({ a: [a0 / nrm, a1 / nrm], c: c / nrm });
  }
  return hs;
}

export function sliceRect(spec: SliceSpec): Polygon {
  const { x0, x1, y0, y1 } = spec.rect;
  return rectangle(x0, x1, y0, y1);
}

/** Exact slice polygon of one region (empty array when the region misses the plane or is flat in it). */
export function sliceRegion(region: Pick<CriticalRegion, 'A' | 'b'>, spec: SliceSpec): Polygon {
  const hs = sliceHalfPlanes(region.A, region.b, spec);
  if (!hs) return [];
  const p = clipHalfPlanes(sliceRect(spec), hs);
  return p.length >= 3 && thickness(p) > tol.radius ? p : [];
}

/** Slice every region; regions that miss the plane (or are flat in it) are left out. */
export function sliceRegions(regions: CriticalRegion[], spec: SliceSpec): SlicePolygon[] {
  const out: SlicePolygon[] = [];
  regions.forEach((r, index) => {
    const polygon = sliceRegion(r, spec);
    if (polygon.length) out.push({ index, id: r.id, polygon, area: area(polygon) });
  });
  return out;
}

export interface SliceGaps {
  /** uncovered parts of the slice rectangle, as disjoint convex pieces */
  uncovered: Polygon[];
  /** uncovered and feasible: holes (null classification when no feasible set was given) */
  holes: Polygon[];
  /** uncovered and infeasible */
  infeasible: Polygon[];
  /** holes grouped into connected components (indices into `holes`) */
  holeGroups: number[][];
  areas: { rect: number; covered: number; uncovered: number; holes: number; infeasible: number };
}

/**
 * Split the uncovered part of the slice into holes (inside the feasible polygon) and infeasible
 * parts (outside it), exactly: complement by convex subtraction, then clipping by the feasible
 * polygon's edges. Pieces thinner than tol.radius (rounding along shared facets) are dropped.
 */
export function sliceGaps(spec: SliceSpec, polys: SlicePolygon[], feasible: Polygon | null): SliceGaps {
  const rect = sliceRect(spec);
  const uncovered = complementPieces(
    rect,
    polys.map((p) => p.polygon),
    tol.radius,
  );
  let holes: Polygon[] = [];
  let infeasible: Polygon[] = [];
  if (feasible === null) {
    holes = [];
    infeasible = [];
  } else if (feasible.length < 3) {
    infeasible = uncovered;
  } else {
    const hs = edgeHalfPlanes(feasible);
    for (const piece of uncovered) {
      let inside = piece;
      for (const h of hs) {
        inside = clipHalfPlane(inside, h);
        if (inside.length < 3) break;
      }
      if (inside.length >= 3 && thickness(inside) > tol.radius) holes.push(inside);
    }
    infeasible = subtractConvex(uncovered, hs, tol.radius);
  }
  const sum = (ps: Polygon[]) => ps.reduce((s, p) => s + area(p), 0);
  const scale = Math.max(spec.rect.x1 - spec.rect.x0, spec.rect.y1 - spec.rect.y0);
  return {
    uncovered,
    holes,
    infeasible,
    holeGroups: connectedComponents(holes, tol.inside * Math.max(1, scale)),
    areas: {
      rect: area(rect),
      covered: polys.reduce((s, p) => s + p.area, 0),
      uncovered: sum(uncovered),
      holes: sum(holes),
      infeasible: sum(infeasible),
    },
  };
}
