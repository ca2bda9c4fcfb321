/**
 * Exact convex-polygon operations in the plane, for 2-D slices of a partition.
 *
 * Polygons are arrays of [x, y] vertices in counter-clockwise order, convex unless stated.
 * Every operation here is a finite sequence of half-plane clips (Sutherland–Hodgman), so the
 * result is exact up to floating-point rounding: no sampling anywhere.
 */
import { polygonCentroid } from 'd3';

export type Point = [number, number];
export type Polygon = Point[];

/** A closed half-plane a·p ≤ c in the plane. */
export interface HalfPlane {
  a: [number, number];
  c: number;
}

export function rectangle(x0: number, x1: number, y0: number, y1: number): Polygon {
  return [
    [x0, y0],
    [x1, y0],
    [x1, y1],
    [x0, y1],
  ];
}

/**
 * Signed area, positive for counter-clockwise order with the y axis up. Shoelace sum taken
 * relative to the first vertex: a speck of size 1e-14 far from the origin then has an area of
 * order 1e-28, not the 1e-17 of rounding noise that the plain sum (e.g. d3.polygonArea) gives.
 */
export function signedArea(p: Polygon): number {
  if (p.length < 3) return 0;
  const [ox, oy] = p[0];
  let s = 0;
  for (let i = 1; i + 1 < p.length; i++) s += (p[i][0] - ox) * (p[i + 1][1] - oy) - (p[i + 1][0] - ox) * (p[i][1] - oy);
  return s / 2;
}

/** Unsigned area of a simple polygon (vertices [x, y] in either orientation), in the product of the axis units. */
export function area(p: Polygon): number {
  return Math.abs(signedArea(p));
}

export function perimeter(p: Polygon): number {
  let s = 0;
  for (let i = 0; i < p.length; i++) {
    const q = p[(i + 1) % p.length];
    s += Math.hypot(q[0] - p[i][0], q[1] - p[i][1]);
  }
  return s;
}

/** Area centroid [x, y] of a simple polygon (d3-polygon's formula), in the axis units. */
export function centroid(p: Polygon): Point {
  return polygonCentroid(p) as Point;
}

/**
 * Width indicator 2·area/perimeter: equals the inradius for a regular polygon and is at most
 * twice the inradius of any convex polygon; a cheap test for slivers left by rounding.
 */
export function thickness(p: Polygon): number {
  const per = perimeter(p);
  return per > 0 ? (2 * area(p)) / per : 0;
}

/** Sutherland–Hodgman: the part of convex polygon `p` with a·q ≤ c. */
export function clipHalfPlane(p: Polygon, h: HalfPlane): Polygon {
  const n = p.length;
  if (n === 0) return p;
  const out: Polygon = [];
  const [a0, a1] = h.a;
  let prev = p[n - 1];
  let sPrev = a0 * prev[0] + a1 * prev[1] - h.c;
  for (let i = 0; i < n; i++) {
    const cur = p[i];
    const sCur = a0 * cur[0] + a1 * cur[1] - h.c;
    if (sCur <= 0) {
      if (sPrev > 0) out.push(intersect(prev, cur, sPrev, sCur));
      out.push(cur);
    } else if (sPrev <= 0) {
      out.push(intersect(prev, cur, sPrev, sCur));
    }
    prev = cur;
    sPrev = sCur;
  }
  return dedupe(out);
}

function intersect(p: Point, q: Point, sp: number, sq: number): Point {
  const t = sp / (sp - sq);
  return [p[0] + t * (q[0] - p[0]), p[1] + t * (q[1] - p[1])];
}

/** Drop consecutive duplicate vertices (exactly equal, as clipping produces at touching vertices). */
function dedupe(p: Polygon): Polygon {
  const out: Polygon = [];
  for (const q of p) {
    const last = out[out.length - 1];
    if (!last || last[0] !== q[0] || last[1] !== q[1]) out.push(q);
  }
  while (out.length > 1 && out[0][0] === out[out.length - 1][0] && out[0][1] === out[out.length - 1][1]) out.pop();
  return out;
}

export function clipHalfPlanes(p: Polygon, hs: HalfPlane[]): Polygon {
  let q = p;
  for (const h of hs) {
    q = clipHalfPlane(q, h);
    if (q.length < 3) return [];
  }
  return q;
}

/** The half-planes (inside = left of each counter-clockwise edge) whose intersection is `p`. */
export function edgeHalfPlanes(p: Polygon): HalfPlane[] {
  const hs: HalfPlane[] = [];
  for (let i = 0; i < p.length; i++) {
    const u = p[i];
    const v = p[(i + 1) % p.length];
    const dx = v[0] - u[0];
    const dy = v[1] - u[1];
    const len = Math.hypot(dx, dy);
    if (len === 0) continue;
    const a: [number, number] = [dy / len, -dx / len]; // outward normal of a CCW edge
    hs.push({ a, c: a[0] * u[0] + a[1] * u[1] });
  }
  return hs;
}

/** Make a convex polygon counter-clockwise. */
export function ccw(p: Polygon): Polygon {
  return signedArea(p) < 0 ? p.slice().reverse() : p;
}

/**
 * Subtract the convex polygon with half-planes `cut` from each convex piece: piece \ P is split
 * into disjoint convex parts, one per edge of P ("outside edge k, inside edges before k").
 * Parts thinner than `minThickness` (rounding slivers along shared edges) are dropped.
 */
export function subtractConvex(pieces: Polygon[], cut: HalfPlane[], minThickness: number): Polygon[] {
  const out: Polygon[] = [];
  for (const piece of pieces) {
    let rest = piece;
    for (const h of cut) {
      const outside = clipHalfPlane(rest, { a: [-h.a[0], -h.a[1]], c: -h.c });
      if (outside.length >= 3 && thickness(outside) > minThickness) out.push(outside);
      rest = clipHalfPlane(rest, h);
      if (rest.length < 3) break;
    }
  }
  return out;
}

/** The part of the convex rectangle/polygon `domain` covered by none of the convex `polys`. */
export function complementPieces(domain: Polygon, polys: Polygon[], minThickness: number): Polygon[] {
  let pieces: Polygon[] = [domain];
  for (const p of polys) {
    if (p.length < 3) continue;
    const bb = bbox(p);
    const hs = edgeHalfPlanes(ccw(p));
    const keep: Polygon[] = [];
    const touch: Polygon[] = [];
    for (const q of pieces) (bboxOverlap(bb, bbox(q)) ? touch : keep).push(q);
    pieces = keep.concat(subtractConvex(touch, hs, minThickness));
    if (pieces.length === 0) break;
  }
  return pieces;
}

export interface BBox {
  x0: number;
  x1: number;
  y0: number;
  y1: number;
}

export function bbox(p: Polygon): BBox {
  let x0 = Infinity,
    x1 = -Infinity,
    y0 = Infinity,
    y1 = -Infinity;
  for (const [x, y] of p) {
    if (x < x0) x0 = x;
    if (x > x1) x1 = x;
    if (y < y0) y0 = y;
    if (y > y1) y1 = y;
  }
  return { x0, x1, y0, y1 };
}

export function bboxOverlap(a: BBox, b: BBox, eps = 0): boolean {
  return a.x0 <= b.x1 + eps && b.x0 <= a.x1 + eps && a.y0 <= b.y1 + eps && b.y0 <= a.y1 + eps;
}

/**
 * Length of the boundary that two polygons share: sum over pairs of edges that lie on one line
 * (within `eps`, opposite directions or not) of the length of their overlap. Polygons touching
 * at a single vertex share length 0.
 */
export function sharedEdgeLength(p: Polygon, q: Polygon, eps: number): number {
  let total = 0;
  for (let i = 0; i < p.length; i++) {
    const u = p[i];
    const v = p[(i + 1) % p.length];
    const dx = v[0] - u[0];
    const dy = v[1] - u[1];
    const len = Math.hypot(dx, dy);
    if (len <= eps) continue;
    const tx = dx / len;
    const ty = dy / len;
    for (let j = 0; j < q.length; j++) {
      const s = q[j];
      const t = q[(j + 1) % q.length];
      // both endpoints of q's edge on the line of p's edge
      const ds = (s[0] - u[0]) * ty - (s[1] - u[1]) * tx;
      const dt = (t[0] - u[0]) * ty - (t[1] - u[1]) * tx;
      if (Math.abs(ds) > eps || Math.abs(dt) > eps) continue;
      const ps = (s[0] - u[0]) * tx + (s[1] - u[1]) * ty;
      const pt = (t[0] - u[0]) * tx + (t[1] - u[1]) * ty;
      const lo = Math.max(0, Math.min(ps, pt));
      const hi = Math.min(len, Math.max(ps, pt));
      if (hi - lo > eps) total += hi - lo;
    }
  }
  return total;
}

/**
 * Group polygons into connected components, two polygons being connected when they share a
 * boundary of positive length (union–find).
 */
export function connectedComponents(polys: Polygon[], eps: number): number[][] {
  const parent = polys.map((_, i) => i);
  const find = (i: number): number => {
    while (parent[i] !== i) {
      parent[i] = parent[parent[i]];
      i = parent[i];
    }
    return i;
  };
  const boxes = polys.map(bbox);
  for (let i = 0; i < polys.length; i++)
    for (let j = i + 1; j < polys.length; j++) {
      if (!bboxOverlap(boxes[i], boxes[j], eps)) continue;
      if (sharedEdgeLength(polys[i], polys[j], eps) > eps) {
        const a = find(i);
        const b = find(j);
        if (a !== b) parent[a] = b;
      }
    }
  const groups = new Map<number, number[]>();
  polys.forEach((_, i) => {
    const r = find(i);
    const g = groups.get(r);
    if (g) g.push(i);
    else groups.set(r, [i]);
  });
  return [...groups.values()];
}

/** Convex polygon contains the point (closed, with slack `eps` in distance). */
export function convexContains(p: Polygon, pt: Point, eps = 0): boolean {
  for (const h of edgeHalfPlanes(ccw(p))) if (h.a[0] * pt[0] + h.a[1] * pt[1] > h.c + eps) return false;
  return true;
}

/**
 * Remove vertices closer than `eps` to the previous one or to the line through their two
 * neighbours (an LP may return a point inside an edge when the objective is normal to it).
 */
export function simplifyConvex(p: Polygon, eps: number): Polygon {
  let q = p.slice();
  let changed = true;
  while (changed && q.length >= 3) {
    changed = false;
    for (let i = 0; i < q.length && q.length >= 3; i++) {
      const a = q[(i + q.length - 1) % q.length];
      const v = q[i];
      const b = q[(i + 1) % q.length];
      const len = Math.hypot(b[0] - a[0], b[1] - a[1]);
      const near = Math.hypot(v[0] - a[0], v[1] - a[1]) <= eps;
      const dist = len > 0 ? Math.abs((b[0] - a[0]) * (v[1] - a[1]) - (b[1] - a[1]) * (v[0] - a[0])) / len : 0;
      if (near || dist <= eps) {
        q.splice(i, 1);
        changed = true;
        i--;
      }
    }
  }
  return q;
}
