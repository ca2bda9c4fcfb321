/**
 * Exact complexity reduction: regions with the same law u(0) = Fθ + g whose union is convex are
 * replaced by that union. Convexity of the union of two polyhedra P, Q with disjoint interiors
 * is decided with their envelope (Bemporad, Fukuda & Torrisi 2001, "Convexity recognition of the
 * union of polyhedra"): env(P, Q) keeps the rows of P valid on Q and the rows of Q valid on P;
 * P ∪ Q is convex iff env(P, Q) = P ∪ Q, i.e. iff every piece env ∩ {a_i θ ≥ b_i} cut off by a
 * dropped row of P lies in Q. Pieces are tested through their vertices (exact in the small
 * dimensions of θ). Merging is greedy and pairwise over adjacent regions; the result is a valid
 * partition with the same law at every point, but not necessarily the fewest regions possible.
 */
import { tol } from '../tol.js';
import { chebyshevBall } from '../lp/kernel.js';
import type { CriticalRegion, FacetInfo } from '../mpqp/types.js';
import type { TableFile } from '../table/format.js';
import { hyperplaneKey, polytopeVertices, type HalfSpaces } from './tree-poly.js';

/** A region of a merged table: a critical region plus the ids of the original regions it covers. */
export interface MergedRegion extends CriticalRegion {
  /** ids of the original regions; `moves` and `value` are those of the first one and hold on it only */
  mergedFrom: number[];
}

export interface MergeStats {
  before: number;
  after: number;
  /** union-convexity tests done, and those that could not be decided (vertex budget exceeded: not merged) */
  tests: number;
  undecided: number;
}

/** Same affine law within tol.primal relative to the size of the coefficients. */
export function sameLaw(p: CriticalRegion['law'], q: CriticalRegion['law']): boolean {
  let scale = 1;
  let diff = 0;
  for (let i = 0; i < p.g.length; i++) {
    scale = Math.max(scale, Math.abs(p.g[i]), Math.abs(q.g[i]));
    diff = Math.max(diff, Math.abs(p.g[i] - q.g[i]));
    for (let j = 0; j < p.F[i].length; j++) {
      scale = Math.max(scale, Math.abs(p.F[i][j]), Math.abs(q.F[i][j]));
      diff = Math.max(diff, Math.abs(p.F[i][j] - q.F[i][j]));
    }
  }
  return diff <= tol.primal * scale;
}

function maxOver(vertices: Float64Array, n: number, a: number[]): number {
  let hi = -Infinity;
  for (let k = 0; k < vertices.length; k += n) {
    let s = 0;
    for (let j = 0; j < n; j++) s += a[j] * vertices[k + j];
    if (s > hi) hi = s;
  }
  return hi;
}

/** Affine rank of a point set (flat, n per point), by Gram–Schmidt on differences. */
function affineRank(points: number[][], n: number): number {
  if (points.length === 0) return -1;
  const basis: number[][] = [];
  for (let k = 1; k < points.length && basis.length < n; k++) {
    const v = points[k].map((x, j) => x - points[0][j]);
    for (const b of basis) {
      const d = v.reduce((s, x, j) => s + x * b[j], 0);
      for (let j = 0; j < n; j++) v[j] -= d * b[j];
    }
    const nv = Math.hypot(...v);
    if (nv > tol.inside * 100) basis.push(v.map((x) => x / nv));
  }
  return basis.length;
}

/** Key of the half-space a·θ ≤ b (orientation kept). */
function orientedKey(a: number[], b: number): string {
  const { key, sign } = hyperplaneKey(a, b);
  return key + (sign > 0 ? '+' : '-');
}

/** Keep only facet rows: rows whose vertices on them span an (n−1)-dimensional face. */
function pruneToFacets(h: HalfSpaces, n: number, vertices: Float64Array): HalfSpaces {
  const A: number[][] = [];
  const b: number[] = [];
  const seen = new Set<string>();
  h.A.forEach((row, i) => {
    const on: number[][] = [];
    for (let k = 0; k < vertices.length; k += n) {
      let s = 0;
      for (let j = 0; j < n; j++) s += row[j] * vertices[k + j];
      if (Math.abs(s - h.b[i]) <= tol.inside) on.push(Array.from(vertices.subarray(k, k + n)));
    }
    const key = orientedKey(row, h.b[i]);
    if (affineRank(on, n) === n - 1 && !seen.has(key)) {
      seen.add(key);
      A.push(row);
      b.push(h.b[i]);
    }
  });
  return { A, b };
}

interface Piece {
  h: HalfSpaces;
  vertices: Float64Array;
  members: number[];
}

/**
 * The convex union of P and Q when it is convex, else null; undefined when the vertex budget
 * does not allow a decision. `box` rows keep the envelope bounded.
 */
function convexUnion(P: Piece, Q: Piece, n: number, box: HalfSpaces): HalfSpaces | null | undefined {
  const slack = tol.inside;
  const keepP = P.h.A.map((a, i) => maxOver(Q.vertices, n, a) <= P.h.b[i] + slack);
  const keepQ = Q.h.A.map((a, i) => maxOver(P.vertices, n, a) <= Q.h.b[i] + slack);
  // Rows tight at no vertex of P or Q are not facets of P ∪ Q when it is convex; dropping them
  // only enlarges env, so the test stays exact, and the box rows keep env bounded.
  const tight = (a: number[], b: number) => maxOver(P.vertices, n, a) >= b - slack || maxOver(Q.vertices, n, a) >= b - slack;
  const env: HalfSpaces = { A: [...box.A], b: [...box.b] };
  const seen = new Set<string>();
  const add = (a: number[], b: number) => {
    const key = orientedKey(a, b);
    if (seen.has(key) || !tight(a, b)) return;
    seen.add(key);
    env.A.push(a);
    env.b.push(b);
  };
  P.h.A.forEach((a, i) => keepP[i] && add(a, P.h.b[i]));
  Q.h.A.forEach((a, i) => keepQ[i] && add(a, Q.h.b[i]));
  // env \ P must lie in Q: test each piece cut off by a dropped row of P through its vertices
  for (let i = 0; i < P.h.A.length; i++) {
    if (keepP[i]) continue;
    const a = P.h.A[i];
    const piece = polytopeVertices({ A: [...env.A, a.map((v) => -v)], b: [...env.b, -P.h.b[i]] }, n);
    if (!piece) return undefined;
    for (let k = 0; k < piece.length; k += n)
      for (let r = 0; r < Q.h.A.length; r++) {
        let s = 0;
        for (let j = 0; j < n; j++) s += Q.h.A[r][j] * piece[k + j];
        if (s > Q.h.b[r] + slack) return null;
      }
  }
  return env;
}

function boxRows(lower: number[], upper: number[]): HalfSpaces {
  const n = lower.length;
  const A: number[][] = [];
  const b: number[] = [];
  for (let j = 0; j < n; j++) {
    const e = new Array<number>(n).fill(0);
    e[j] = 1;
    A.push(e);
    b.push(upper[j]);
    const f = new Array<number>(n).fill(0);
    f[j] = -1;
    A.push(f);
    b.push(-lower[j]);
  }
  return { A, b };
}

/** Merge regions of a table with the same law whose union is convex; returns the new table and counts. */
export function mergeRegions(
  table: TableFile,
  onProgress?: (p: { groupsDone: number; groups: number; tests: number; elapsedSeconds: number }) => void,
): { table: TableFile; stats: MergeStats } {
  const t0 = Date.now();
  let lastProgress = t0;
  const n = table.dims.ntheta;
  const regions = table.regions;
  const box = boxRows(table.box.lower, table.box.upper);
  const stats: MergeStats = { before: regions.length, after: 0, tests: 0, undecided: 0 };
  const adj = regions.map((r) => new Set(r.facets.flatMap((f) => f.neighbours)));
  const hasNeighbours = regions.some((r) => r.facets.some((f) => f.neighbours.length > 0));

  // group by law (first come, first served), keeping id order
  const groups: number[][] = [];
  for (let i = 0; i < regions.length; i++) {
    const g = groups.find((gr) => sameLaw(regions[gr[0]].law, regions[i].law));
    if (g) g.push(i);
    else groups.push([i]);
  }
  const pieces: Piece[] = [];
  let nextUid = 0;
  for (const [gi, group] of groups.entries()) {
    if (onProgress && Date.now() - lastProgress > 100) {
      lastProgress = Date.now();
      onProgress({ groupsDone: gi, groups: groups.length, tests: stats.tests, elapsedSeconds: (Date.now() - t0) / 1000 });
    }
    const work: Piece[] = [];
    for (const i of group) {
      const v = polytopeVertices(regions[i], n);
      work.push({ h: { A: regions[i].A, b: regions[i].b }, vertices: v ?? new Float64Array(0), members: [i] });
      if (!v) work[work.length - 1].members.push(-1); // marks "no vertices": never merged
    }
    const touching = (p: Piece, q: Piece) =>
      !hasNeighbours || p.members.some((i) => i >= 0 && q.members.some((k) => k >= 0 && adj[i].has(regions[k].id)));
    // pairs that failed once are not tried again until one of the two pieces changes (new uid)
    const uid = work.map(() => nextUid++);
    const failed = new Set<string>();
    let changed = true;
    while (changed) {
      changed = false;
      for (let a = 0; a < work.length; a++)
        for (let c = a + 1; c < work.length; c++) {
          const P = work[a];
          const Q = work[c];
          const pair = `${uid[a]}|${uid[c]}`;
          if (failed.has(pair) || P.members.includes(-1) || Q.members.includes(-1) || !touching(P, Q)) continue;
          stats.tests++;
          const env = convexUnion(P, Q, n, box);
          const v = env ? polytopeVertices(env, n) : null;
          if (env === undefined || (env && !v)) stats.undecided++;
          if (!env || !v) {
            failed.add(pair);
            continue;
          }
          work[a] = { h: pruneToFacets(env, n, v), vertices: v, members: [...P.members, ...Q.members].sort((x, y) => x - y) };
          uid[a] = nextUid++;
          work.splice(c, 1);
          uid.splice(c, 1);
          changed = true;
          c = a; // try the grown piece against every later one
        }
    }
    pieces.push(...work);
  }
  pieces.sort((p, q) => p.members.filter((i) => i >= 0)[0] - q.members.filter((i) => i >= 0)[0]);

  // new ids, facets copied from the member whose row matches, neighbours mapped to new ids
  const newIdOf = new Map<number, number>();
  pieces.forEach((p, k) => p.members.forEach((i) => i >= 0 && newIdOf.set(regions[i].id, k)));
  const out: MergedRegion[] = pieces.map((p, k) => {
    const members = p.members.filter((i) => i >= 0);
    const first = regions[members[0]];
    if (members.length === 1) return { ...first, id: k, facets: first.facets.map((f) => remapFacet(f, newIdOf, k)), mergedFrom: [first.id] };
    const facets: FacetInfo[] = p.h.A.map((row, r) => {
      const key = hyperplaneKey(row, p.h.b[r]).key;
      const nbs = new Set<number>();
      let info: FacetInfo | null = null;
      for (const i of members)
        regions[i].A.forEach((ra, ri) => {
          if (hyperplaneKey(ra, regions[i].b[ri]).key !== key) return;
          const f = regions[i].facets[ri];
          if (!info) info = { kind: f.kind, row: f.row, neighbours: [] };
          for (const nb of f.neighbours) if (newIdOf.has(nb) && newIdOf.get(nb) !== k) nbs.add(newIdOf.get(nb)!);
        });
      const base: FacetInfo = info ?? { kind: 'primal', row: -1, neighbours: [] };
      return { kind: base.kind, row: base.row, neighbours: [...nbs].sort((x, y) => x - y) };
    });
    const m = p.h.A.length;
    const Af = new Float64Array(m * n);
    p.h.A.forEach((row, i) => row.forEach((v, j) => (Af[i * n + j] = v)));
    const ball = chebyshevBall(Af, Float64Array.from(p.h.b), m, n, Float64Array.from(first.chebyshev.center), boxWidth(table));
    return {
      ...first,
      id: k,
      A: p.h.A,
      b: p.h.b,
      facets,
      chebyshev: { center: Array.from(ball.center), radius: ball.radius },
      mergedFrom: members.map((i) => regions[i].id),
    };
  });
  stats.after = out.length;
  return { table: { ...table, regions: out, stats: { ...table.stats, regions: out.length } }, stats };
}

function remapFacet(f: FacetInfo, newIdOf: Map<number, number>, self: number): FacetInfo {
  const nbs = new Set<number>();
  for (const nb of f.neighbours) {
    const m = newIdOf.get(nb);
    if (m !== undefined && m !== self) nbs.add(m);
  }
  return { kind: f.kind, row: f.row, neighbours: [...nbs].sort((x, y) => x - y) };
}

function boxWidth(table: TableFile): number {
  let w = 0;
  for (let j = 0; j < table.dims.ntheta; j++) w = Math.max(w, table.box.upper[j] - table.box.lower[j]);
  return w;
}
