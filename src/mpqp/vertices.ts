import { farkasBound, type PrefilterScratch } from './prefilter.js';

/**
 * Vertices of a polytope {θ : A_S θ ≤ b_S} inside a box, by the double description method (Motzkin
 * et al. 1953; the incremental form with the algebraic adjacency test of Fukuda & Prodon 1996):
 * start from the box corners and cut by one row at a time; a cut keeps the vertices on its side and
 * adds, on every edge it crosses, the crossing point. Each vertex carries the rows tight at it
 * (combinatorially: the rows it was made on, never re-derived from rounded coordinates), so an edge
 * is two vertices whose common tight rows have rank n − 1 (Fukuda & Prodon's test).
 *
 * The region builder uses the vertices only to *find* LP-free certificates (prefilter.ts): a row
 * whose maximum over the vertices is at a vertex with tight rows W is checked by weak duality on W
 * (farkasBound), which is valid whatever the vertex list is, and a vertex that breaks a row aims a
 * ray whose first hit is a facet witness. A vertex list spoiled by round-off can therefore only make
 * a certificate fail (the row goes to its LP), never drop a facet or keep a redundant row.
 */

/**
 * The vertices of a polytope, flat: vertex v's coordinates are x[v·n … v·n + n), the rows tight at it
 * (ascending) t[tOff[v] … tOff[v + 1]). `count` vertices are in use; the arrays may be longer. A cut
 * writes the new list into the spare arrays (x2, tOff2, t2) and swaps them with the current ones, so a
 * set reused from region to region allocates nothing once its arrays have grown (the arrays of one
 * vertex each were most of the vertex pass's garbage).
 */
export interface VertexSet {
  n: number;
  count: number;
  x: Float64Array;
  tOff: Int32Array;
  t: Int32Array;
  x2: Float64Array;
  tOff2: Int32Array;
  t2: Int32Array;
}

/** An empty set for points of n coordinates (its arrays grow on demand). */
export function emptyVertexSet(n: number): VertexSet {
  return { n, count: 0, x: new Float64Array(64 * n), tOff: new Int32Array(65), t: new Int32Array(64 * n), x2: new Float64Array(64 * n), tOff2: new Int32Array(65), t2: new Int32Array(64 * n) };
}

/** Vertex v's coordinates as a new array (for readers outside the hot loops). */
export function vertexX(V: VertexSet, v: number): number[] {
  return Array.from(V.x.subarray(v * V.n, (v + 1) * V.n));
}

/** The rows tight at vertex v as a new array (ascending). */
export function vertexTight(V: VertexSet, v: number): number[] {
  return Array.from(V.t.subarray(V.tOff[v], V.tOff[v + 1]));
}

/** a copy of `a` with room for at least `need` entries (twice that); the covering's scratch grows by it too */
export function grownF64(a: Float64Array, need: number): Float64Array {
  const g = new Float64Array(2 * need);
  g.set(a);
  return g;
}
export function grownI32(a: Int32Array, need: number): Int32Array {
  const g = new Int32Array(2 * need);
  g.set(a);
  return g;
}

/**
 * The 2ⁿ corners of the box lo ≤ θ ≤ hi, whose sides are rows boxRow + 2j (θ_j ≤ hi_j) and
 * boxRow + 2j + 1 (−θ_j ≤ −lo_j) of the caller's A; written into `into` (its arrays reused) when given.
 */
export function boxVertices(n: number, lo: ArrayLike<number>, hi: ArrayLike<number>, boxRow: number, into?: VertexSet): VertexSet {
  const V = into && into.n === n ? into : emptyVertexSet(n);
  const cnt = 1 << n;
  if (V.x.length < cnt * n) V.x = new Float64Array(2 * cnt * n);
  if (V.tOff.length < cnt + 1) V.tOff = new Int32Array(2 * cnt + 2);
  if (V.t.length < cnt * n) V.t = new Int32Array(2 * cnt * n);
  const { x, t, tOff } = V;
  tOff[0] = 0;
  for (let mask = 0; mask < cnt; mask++) {
    const o = mask * n;
    for (let j = 0; j < n; j++) {
      const up = (mask >> j) & 1;
      x[o + j] = up ? hi[j] : lo[j];
      t[o + j] = boxRow + 2 * j + (up ? 0 : 1);
    }
    tOff[mask + 1] = o + n;
  }
  V.count = cnt;
  return V;
}

/** Scratch for the edge search's common rows, the slacks and the outside / inside / degenerate vertex lists (grown on demand; one per thread). */
const cutScratch = { buf: new Int32Array(64), s: new Float64Array(64), outside: new Int32Array(64), inside: new Int32Array(64), degenerate: new Int32Array(64) };

/** Scratch for the rank test (n × n rows at most per call). */
const rankScratch = { m: new Float64Array(0) };

/** Rank of the rows `rows` of A (n columns), Gaussian elimination with a relative pivot threshold. */
function rankOf(A: Float64Array, n: number, rows: ArrayLike<number>, k: number): number {
  if (rankScratch.m.length < k * n) rankScratch.m = new Float64Array(2 * k * n);
  const M = rankScratch.m;
  for (let i = 0; i < k; i++) for (let j = 0; j < n; j++) M[i * n + j] = A[rows[i] * n + j];
  let rank = 0;
  for (let col = 0; col < n && rank < k; col++) {
    let p = -1;
    let best = 1e-9;
    for (let i = rank; i < k; i++) {
      const v = Math.abs(M[i * n + col]);
      if (v > best) {
        best = v;
        p = i;
      }
    }
    if (p < 0) continue;
    if (p !== rank)
      for (let j = 0; j < n; j++) {
        const t = M[p * n + j];
        M[p * n + j] = M[rank * n + j];
        M[rank * n + j] = t;
      }
    for (let i = rank + 1; i < k; i++) {
      const f = M[i * n + col] / M[rank * n + col];
      if (f === 0) continue;
      for (let j = col; j < n; j++) M[i * n + j] -= f * M[rank * n + j];
    }
    rank++;
  }
  return rank;
}

/**
 * Sorted intersection of two sorted index lists, T[a0 … a1) and T[b0 … b1), into `out`; returns its
 * length when that is at least `need`, else some number below `need` (the scan stops once either
 * list has lost more entries than leave `need` in common; `out` is then partial).
 */
export function intersect(T: Int32Array, a0: number, a1: number, b0: number, b1: number, out: Int32Array, need: number): number {
  let i = a0;
  let j = b0;
  let k = 0;
  const spareA = a1 - a0 - need;
  const spareB = b1 - b0 - need;
  while (i < a1 && j < b1) {
    if (i - a0 - k > spareA || j - b0 - k > spareB) return k;
    const ai = T[i];
    const bj = T[j];
    if (ai === bj) {
      out[k++] = ai;
      i++;
      j++;
    } else if (ai < bj) i++;
    else j++;
  }
  return k;
}

/**
 * The face table of `cutVertices`' ordered edge search (one per thread, grown on demand): slot heads
 * and, per entry, its face hash, inside vertex and next entry; `cand` the collected candidates.
 */
const faces = { head: new Int32Array(64), mask: 63, key: new Int32Array(256), q: new Int32Array(256), next: new Int32Array(256), cand: new Int32Array(256), mix: new Int32Array(64) };

/**
 * The ordered search's face hashes: a face's hash is the sum (mod 2³²) of a mixed value of each of
 * its rows, so a vertex's n faces take one pass (the vertex's sum minus one row's value each).
 * Equal faces hash equal; a collision only adds a candidate that the common-row count then rejects.
 * Writes each row's value into mix[0 … len) and returns their sum.
 */
function rowMixes(T: Int32Array, o: number, len: number, mix: Int32Array): number {
  let all = 0;
  for (let i = 0; i < len; i++) {
    let h = Math.imul(T[o + i] + 1, 0x9e3779b1);
    h ^= h >>> 16;
    h = Math.imul(h, 0x85ebca6b);
    h ^= h >>> 13;
    mix[i] = h;
    all = (all + h) | 0;
  }
  return all;
}

/** Fill `faces` with every simple (n tight rows) inside vertex (the first `ni` of `inside`) under the hashes of its n faces. */
function faceTable(T: Int32Array, tOff: Int32Array, inside: Int32Array, ni: number, n: number): void {
  const entries = ni * n;
  let size = 64;
  while (size < 2 * entries) size *= 2;
  if (faces.head.length < size) faces.head = new Int32Array(size);
  faces.mask = size - 1;
  faces.head.fill(-1, 0, size);
  if (faces.key.length < entries) {
    faces.key = new Int32Array(2 * entries);
    faces.q = new Int32Array(2 * entries);
    faces.next = new Int32Array(2 * entries);
    faces.cand = new Int32Array(2 * entries);
  }
  let e = 0;
  const mix = faces.mix;
  for (let i = 0; i < ni; i++) {
    const q = inside[i];
    const o = tOff[q];
    if (tOff[q + 1] - o !== n) continue;
    const all = rowMixes(T, o, n, mix);
    for (let omit = 0; omit < n; omit++) {
      const h = (all - mix[omit]) | 0;
      const slot = h & faces.mask;
      faces.key[e] = h;
      faces.q[e] = q;
      faces.next[e] = faces.head[slot];
      faces.head[slot] = e;
      e++;
    }
  }
}

/** Hash of the sorted rows T[o … o + len) without the one at o + omit (collisions are checked by the caller). */
function faceKey(T: Int32Array, o: number, len: number, omit: number): number {
  let h = 0x811c9dc5;
  for (let i = 0; i < len; i++) {
    if (i === omit) continue;
    h = Math.imul(h ^ T[o + i], 0x01000193);
  }
  return h | 0;
}

/**
 * Append src[off … off + k) with r inserted before the first larger row (not when equal to a row met
 * first; at the end when none is larger) to V.t2 from `at`; returns the new end.
 */
function appendWithRow(V: VertexSet, at: number, src: Int32Array, off: number, k: number, r: number): number {
  if (V.t2.length < at + k + 1) V.t2 = grownI32(V.t2, at + k + 1);
  const out = V.t2;
  let i = 0;
  for (; i < k; i++) {
    const v = src[off + i];
    if (v >= r) break;
    out[at++] = v;
  }
  if (i === k || src[off + i] !== r) out[at++] = r;
  for (; i < k; i++) out[at++] = src[off + i];
  return at;
}

/** Append src[off … off + k) to V.t2 from `at`; returns the new end. */
function appendCopy(V: VertexSet, at: number, src: Int32Array, off: number, k: number): number {
  if (V.t2.length < at + k) V.t2 = grownI32(V.t2, at + k);
  const out = V.t2;
  for (let i = 0; i < k; i++) out[at++] = src[off + i];
  return at;
}

/** Make V.x2 and V.tOff2 hold at least `count` vertices (their first `count` entries kept). */
function reserve(V: VertexSet, count: number): void {
  if (V.x2.length < count * V.n) V.x2 = grownF64(V.x2, count * V.n);
  if (V.tOff2.length < count + 1) V.tOff2 = grownI32(V.tOff2, count + 1);
}

/** The spare arrays become the current ones (and the current ones spare). */
function swap(V: VertexSet, count: number, tightToo: boolean, xToo: boolean): void {
  if (xToo) {
    const x = V.x;
    V.x = V.x2;
    V.x2 = x;
  }
  if (tightToo) {
    const tOff = V.tOff;
    V.tOff = V.tOff2;
    V.tOff2 = tOff;
    const t = V.t;
    V.t = V.t2;
    V.t2 = t;
  }
  V.count = count;
}

/**
 * Cut the vertex set by row r (a_r θ ≤ b_r, unit normal): vertices more than `eps` outside go,
 * vertices within `eps` gain r as a tight row, and each edge from an inside to an outside vertex
 * gives its crossing point (`hashEdges` forces or forbids the hashed edge search; by default it
 * is used when there are many pairs; 'ordered' forces the all-pairs order through a face hash,
 * the default below that many pairs and above 32). False when the vertex count would pass `maxVertices` (the caller gives
 * up on the vertices; nothing is changed then).
 */
export function cutVertices(V: VertexSet, A: Float64Array, b: ArrayLike<number>, r: number, eps: number, maxVertices: number, hashEdges?: boolean | 'ordered'): boolean {
  const { n } = V;
  const cnt = V.count;
  if (cutScratch.s.length < cnt) {
    cutScratch.s = new Float64Array(2 * cnt);
    cutScratch.outside = new Int32Array(2 * cnt);
    cutScratch.inside = new Int32Array(2 * cnt);
    cutScratch.degenerate = new Int32Array(2 * cnt);
  }
  const s = cutScratch.s; // entries 0 … cnt − 1 written below before any read
  const X = V.x;
  const T = V.t;
  const TO = V.tOff;
  let outside = 0;
  for (let v = 0; v < cnt; v++) {
    let t = -b[r];
    const o = v * n;
    for (let j = 0; j < n; j++) t += A[r * n + j] * X[o + j];
    s[v] = t;
    if (t > eps) outside++;
  }
  if (outside === 0) {
    // the coordinates stay; the tight lists of the vertices on the plane gain r
    reserve(V, cnt);
    let at = 0;
    V.tOff2[0] = 0;
    for (let v = 0; v < cnt; v++) {
      at = s[v] >= -eps ? appendWithRow(V, at, T, TO[v], TO[v + 1] - TO[v], r) : appendCopy(V, at, T, TO[v], TO[v + 1] - TO[v]);
      V.tOff2[v + 1] = at;
    }
    swap(V, cnt, true, false);
    return true;
  }
  // the new list, in the spare arrays: the vertices kept, in order, then the crossings
  reserve(V, cnt);
  let nx = 0;
  let at = 0;
  V.tOff2[0] = 0;
  for (let v = 0; v < cnt; v++) {
    if (s[v] > eps) continue;
    const o = v * n;
    const x2 = V.x2;
    for (let j = 0; j < n; j++) x2[nx * n + j] = X[o + j];
    at = s[v] >= -eps ? appendWithRow(V, at, T, TO[v], TO[v + 1] - TO[v], r) : appendCopy(V, at, T, TO[v], TO[v + 1] - TO[v]);
    V.tOff2[++nx] = at;
  }
  // edges between simple vertices (n tight rows): the two share n − 1 rows, found by a hash of
  // each inside vertex's (n − 1)-row subsets when there are many pairs (all pairs tried when few);
  // pairs with a degenerate vertex take the rank test
  const outsideAll = cutScratch.outside;
  const insideAll = cutScratch.inside;
  let no = 0;
  let ni = 0;
  for (let q = 0; q < cnt; q++) {
    if (s[q] > eps) outsideAll[no++] = q;
    else if (s[q] < -eps) insideAll[ni++] = q;
  }
  const hashed = hashEdges === 'ordered' ? false : (hashEdges ?? no * ni > 4 * n * (no + ni));
  const byFace = hashed ? new Map<number, number[]>() : null;
  const degenerateInside = cutScratch.degenerate;
  let nd = 0;
  for (let i = 0; i < ni; i++) {
    const q = insideAll[i];
    if (TO[q + 1] - TO[q] !== n) {
      degenerateInside[nd++] = q;
      continue;
    }
    if (!hashed) continue;
    for (let omit = 0; omit < n; omit++) {
      const key = faceKey(T, TO[q], n, omit);
      const list = byFace!.get(key);
      if (list) list.push(q);
      else byFace!.set(key, [q]);
    }
  }
  const addCrossing = (p: number, q: number, common: Int32Array, k: number): boolean => {
    if (nx >= maxVertices) return false;
    const t = s[p] / (s[p] - s[q]);
    reserve(V, nx + 1);
    const x2 = V.x2;
    const o = nx * n;
    const op = p * n;
    const oq = q * n;
    for (let j = 0; j < n; j++) x2[o + j] = X[op + j] + t * (X[oq + j] - X[op + j]);
    at = appendWithRow(V, at, common, 0, k, r);
    V.tOff2[++nx] = at;
    return true;
  };
  // the all-pairs order through a hash: every simple inside vertex listed under its n (n − 1)-row
  // faces (chained in typed arrays); an outside vertex collects the inside vertices sharing one of
  // its faces' hashes, ascending and once each, and tests those as the all-pairs loop would. A pair
  // with n − 1 common rows shares a face, so the crossings and their order are the all-pairs ones.
  const ordered = hashEdges === 'ordered' || (!hashed && hashEdges === undefined && no * ni > 32);
  if (ordered) faceTable(T, TO, insideAll, ni, n);
  for (let ip = 0; ip < no; ip++) {
    const p = outsideAll[ip];
    const p0 = TO[p];
    const p1 = TO[p + 1];
    if (cutScratch.buf.length < p1 - p0) cutScratch.buf = new Int32Array(2 * (p1 - p0));
    const buf = cutScratch.buf;
    if (p1 - p0 === n && ordered) {
      const ft = faces;
      let nc = 0;
      const all = rowMixes(T, p0, n, ft.mix);
      for (let omit = 0; omit < n; omit++) {
        const h = (all - ft.mix[omit]) | 0;
        for (let e = ft.head[h & ft.mask]; e >= 0; e = ft.next[e]) {
          if (ft.key[e] !== h) continue;
          // insertion into the ascending candidate list, once each
          const q = ft.q[e];
          let i = nc;
          while (i > 0 && ft.cand[i - 1] > q) i--;
          if (i > 0 && ft.cand[i - 1] === q) continue;
          for (let t = nc; t > i; t--) ft.cand[t] = ft.cand[t - 1];
          ft.cand[i] = q;
          nc++;
        }
      }
      for (let c = 0; c < nc; c++) {
        const q = ft.cand[c];
        const k = intersect(T, p0, p1, TO[q], TO[q + 1], buf, n - 1);
        if (k === n - 1 && !addCrossing(p, q, buf, k)) return false;
      }
    } else if (p1 - p0 === n) {
      if (hashed) {
        for (let omit = 0; omit < n; omit++) {
          const list = byFace!.get(faceKey(T, p0, n, omit));
          if (!list) continue;
          for (const q of list) {
            const k = intersect(T, p0, p1, TO[q], TO[q + 1], buf, n - 1);
            if (k === n - 1 && !addCrossing(p, q, buf, k)) return false;
          }
        }
      } else
        for (let i = 0; i < ni; i++) {
          const q = insideAll[i];
          if (TO[q + 1] - TO[q] !== n) continue; // with the degenerate ones below
          const k = intersect(T, p0, p1, TO[q], TO[q + 1], buf, n - 1);
          if (k === n - 1 && !addCrossing(p, q, buf, k)) return false;
        }
    }
    const others = p1 - p0 === n ? degenerateInside : insideAll;
    const nOthers = p1 - p0 === n ? nd : ni;
    for (let i = 0; i < nOthers; i++) {
      const q = others[i];
      if (cutScratch.buf.length < TO[q + 1] - TO[q]) cutScratch.buf = new Int32Array(2 * (TO[q + 1] - TO[q]));
      const k = intersect(T, p0, p1, TO[q], TO[q + 1], cutScratch.buf, n - 1);
      if (k < n - 1) continue;
      if (rankOf(A, n, cutScratch.buf, k) !== n - 1) continue;
      if (!addCrossing(p, q, cutScratch.buf, k)) return false;
    }
  }
  swap(V, nx, true, true);
  return true;
}

/**
 * The least of `bound(c, W)` (a weak-duality bound on c·θ, farkasBound) over W an n-row subset of the rows tight at a vertex (all of them when there are n; at a degenerate vertex
 * up to `maxTries` subsets in lexicographic order); +∞ when none proves anything. The rows are
 * T[off … off + k) (all of T by default).
 */
export function vertexBound(
  c: ArrayLike<number>,
  T: ArrayLike<number>,
  n: number,
  bound: (c: ArrayLike<number>, W: ArrayLike<number>) => number,
  maxTries = 32,
  off = 0,
  k = T.length - off,
): number {
  if (k < n) return Infinity;
  if (k === n) {
    if (off === 0) return bound(c, T);
    if (boundScratch.length < n) boundScratch = new Int32Array(2 * n);
    for (let i = 0; i < n; i++) boundScratch[i] = T[off + i];
    return bound(c, boundScratch);
  }
  const idx = new Int32Array(n);
  for (let i = 0; i < n; i++) idx[i] = i;
  const W = new Int32Array(n);
  let best = Infinity;
  for (let tries = 0; tries < maxTries; tries++) {
    for (let i = 0; i < n; i++) W[i] = T[off + idx[i]];
    best = Math.min(best, bound(c, W));
    // next n-subset of 0..k−1
    let i = n - 1;
    while (i >= 0 && idx[i] === k - n + i) i--;
    if (i < 0) break;
    idx[i]++;
    for (let j = i + 1; j < n; j++) idx[j] = idx[j - 1] + 1;
  }
  return best;
}

/** vertexBound's copy of a vertex's n tight rows (read by `bound` within the call only; one per thread) */
let boundScratch = new Int32Array(8);
/** vertexPass's rows left to their LP (one per thread) */
let toLpScratch = new Uint8Array(64);

/** Highest dimension where the vertex pass is tried (2ⁿ box corners to start from). */
export const maxVertexDim = 8;
/** A vertex pass giving up past this many vertices leaves everything to the LPs. */
const maxVertices = 4000;
/** A row broken by a vertex by more than this aims a ray (unit rows; round-off is far below). */
const breakMargin = 1e-7;
/** A ray's first hit is a facet witness when every other row keeps at least this slack there. */
const witnessMargin = 1e-7;

/**
 * LP-free decisions for the rows of a region {θ : A θ ≤ b} (unit rows; the last 2n are the box
 * sides, row m − 2n + 2j is θ_j ≤ up_j and the next −θ_j ≤ −lo_j), `center` strictly inside with
 * `slack` = b − A·center, `sure` the rows already known to be facets.
 *
 * 1. Vertices of the polytope of the sure rows (cut from the box).
 * 2. For each row in turn, while a vertex breaks it by more than breakMargin and it is not sure:
 *    aim a ray from the centre at the vertex that breaks it most; the first row hit, when every other row keeps witnessMargin slack at the hit point
 *    p, is a facet: p + σ·a_h satisfies every other row and breaks h by σ ≥ witnessMargin, so the
 *    redundancy LP of h (max a_h·θ over the other rows) is > b_h + σ and keeps it. The row joins the
 *    sure rows and cuts the vertices. A ray without such a witness leaves the row to its LP.
 * 3. A row that is not sure, whose maximum over the vertices is at a vertex with tight (sure or box)
 *    rows W: weak duality on W (farkasBound) bounds max a_r·θ over {A_W θ ≤ b_W} ⊇ the region
 *    without row r; a bound ≤ b_r + tol.redundancy drops it, as its LP would (the LP's value is
 *    below the bound).
 * 4. Each box side ±θ_j the same way at its best vertex, when that vertex keeps every row left to
 *    the LPs (else the side is not the region's and goes to its LP): the proven bound (+ tol.redundancy) is the
 *    bounding box's side, `sideKnown[2j]` (upper) / `[2j + 1]` (lower) set; other sides go to LPs.
 * Rows left (neither sure nor dropped) go to the caller's LPs.
 * Returns the vertex set of the box cut by the rows marked sure in steps 1–2 (the rows sure on entry
 * and those found by a witness; every tight list holds only those rows and box sides), or null when
 * the vertex count passed its bound (the pass then stopped early). When every row the caller keeps
 * at the end is one of those or a box side, this is the region's own vertex list. The set is the
 * pass's own (reused): valid until the next call on this thread.
 */
export function vertexPass(
  A: Float64Array,
  b: Float64Array,
  m: number,
  n: number,
  lo: ArrayLike<number>,
  up: ArrayLike<number>,
  center: Float64Array,
  slack: Float64Array,
  sure: Uint8Array,
  alive: Uint8Array,
  sideKnown: Uint8Array,
  bbLo: Float64Array,
  bbHi: Float64Array,
  scratch: PrefilterScratch,
  redundancyTol: number,
): VertexSet | null {
  const boxRow = m - 2 * n;
  // the pass's own set, reused from region to region (its arrays grow once): the list returned is
  // valid until the next vertexPass on this thread (buildRegion copies it at once)
  if (passSet === null || passSet.n !== n) passSet = emptyVertexSet(n);
  const V = boxVertices(n, lo, up, boxRow, passSet);
  const eps = 1e-10;
  for (let q = 0; q < boxRow; q++) if (sure[q] && !cutVertices(V, A, b, q, eps, maxVertices)) return null;
  if (toLpScratch.length < m) toLpScratch = new Uint8Array(2 * m);
  const toLp = toLpScratch; // read within this call only
  toLp.fill(0, 0, m);
  const d = new Float64Array(n);
  const vLo = new Float64Array(n);
  const vHi = new Float64Array(n);
  // the vertices' box, after every cut (the row and argmax scans below read the flat coordinates)
  const vertexBox = (): void => {
    vLo.fill(Infinity);
    vHi.fill(-Infinity);
    const X = V.x;
    const end = V.count * n;
    for (let o = 0; o < end; o += n)
      for (let j = 0; j < n; j++) {
        const t = X[o + j];
        if (t < vLo[j]) vLo[j] = t;
        if (t > vHi[j]) vHi[j] = t;
      }
  };
  vertexBox();
  // one pass over the rows: a cut only shrinks the polytope, so a row no vertex breaks stays so
  for (let r = 0; r < boxRow; r++) {
    while (!sure[r] && !toLp[r] && alive[r]) {
      // the vertices' box first: a row it keeps is broken by no vertex
      let mx = -b[r];
      for (let j = 0; j < n; j++) {
        const a = A[r * n + j];
        mx += a > 0 ? a * vHi[j] : a * vLo[j];
      }
      if (mx <= breakMargin) break;
      let worst = breakMargin;
      let wv = -1;
      const X = V.x;
      for (let v = 0, cnt = V.count; v < cnt; v++) {
        let s = -b[r];
        const o = v * n;
        for (let j = 0; j < n; j++) s += A[r * n + j] * X[o + j];
        if (s > worst) {
          worst = s;
          wv = v;
        }
      }
      if (wv < 0) break;
      for (let j = 0; j < n; j++) d[j] = X[wv * n + j] - center[j];
      const h = firstHitWitness(A, m, n, slack, d);
      if (h < 0 || h >= boxRow || sure[h]) {
        toLp[r] = 1;
        break;
      }
      sure[h] = 1;
      if (!cutVertices(V, A, b, h, eps, maxVertices)) return null;
      vertexBox();
    }
  }
  // box sides the region reaches: a ray aimed at the mean of the vertices on the side; when the side
  // is the first row hit and every other row keeps witnessMargin slack there, the same witness as
  // above proves that the side's LP keeps it (a box facet, otherwise one LP per region and side)
  const X = V.x;
  const T = V.t;
  const TO = V.tOff;
  const cnt = V.count;
  for (let q = boxRow; q < m; q++) {
    if (sure[q] || !alive[q]) continue;
    // no vertex on the side (box corners and points cut on box edges keep the side's coordinate exactly): nothing to aim at
    const j0 = (q - boxRow) >> 1;
    if ((q - boxRow) & 1 ? vLo[j0] > lo[j0] : vHi[j0] < up[j0]) continue;
    let k = 0;
    d.fill(0);
    for (let v = 0; v < cnt; v++) {
      let on = false;
      for (let i = TO[v]; i < TO[v + 1] && !on; i++) on = T[i] === q;
      if (!on) continue;
      k++;
      for (let j = 0; j < n; j++) d[j] += X[v * n + j];
    }
    if (k < n) continue; // fewer than n vertices: not a facet of the vertices' polytope
    for (let j = 0; j < n; j++) d[j] = d[j] / k - center[j];
    if (firstHitWitness(A, m, n, slack, d) === q) sure[q] = 1;
  }
  const bound = (c: ArrayLike<number>, W: ArrayLike<number>): number => farkasBound(c, A, b, W, n, lo, up, scratch);
  // box sides first: rows the proven box keeps (the builder's own box test) need no certificate
  const e = new Float64Array(n);
  for (let j = 0; j < n; j++)
    for (const sgn of [1, -1]) {
      e.fill(0);
      e[j] = sgn;
      const v = argmaxFlat(X, cnt, n, e, 0);
      if (v < 0 || breaksAny(A, b, n, X, v * n, toLp, boxRow)) continue; // not the region's own side: to its LP
      const value = vertexBound(e, T, n, bound, 32, TO[v], TO[v + 1] - TO[v]);
      if (!Number.isFinite(value)) continue;
      if (sgn > 0) bbHi[j] = Math.min(bbHi[j], value + redundancyTol);
      else bbLo[j] = Math.max(bbLo[j], -value - redundancyTol);
      sideKnown[2 * j + (sgn > 0 ? 0 : 1)] = 1;
    }
  for (let r = 0; r < boxRow; r++) {
    if (sure[r] || toLp[r] || !alive[r]) continue;
    let mx = -b[r];
    for (let j = 0; j < n; j++) {
      const a = A[r * n + j];
      mx += a > 0 ? a * bbHi[j] : a * bbLo[j];
    }
    if (mx <= -redundancyTol) continue; // the caller's box test drops it
    const v = argmaxFlat(X, cnt, n, A, r * n);
    if (v < 0) continue;
    const c = A.subarray(r * n, (r + 1) * n);
    if (vertexBound(c, T, n, bound, 32, TO[v], TO[v + 1] - TO[v]) <= b[r] + redundancyTol) alive[r] = 0;
  }
  return V;
}

/** vertexPass's vertex set (one per thread, reused) */
let passSet: VertexSet | null = null;

/** Whether the point X[o … o + n) breaks one of the rows flagged in `rows` (of the first `m`) by more than breakMargin. */
function breaksAny(A: Float64Array, b: Float64Array, n: number, X: Float64Array, o: number, rows: Uint8Array, m: number): boolean {
  for (let q = 0; q < m; q++) {
    if (!rows[q]) continue;
    let s = -b[q];
    for (let j = 0; j < n; j++) s += A[q * n + j] * X[o + j];
    if (s > breakMargin) return true;
  }
  return false;
}

/** The first vertex of greatest c·x (0 + Σ c_j x_j in axis order) of the flat copy X of `count` vertices, c read from c[off …]; −1 when none. */
function argmaxFlat(X: Float64Array, count: number, n: number, c: ArrayLike<number>, off: number): number {
  let best = -Infinity;
  let arg = -1;
  for (let v = 0; v < count; v++) {
    let s = 0;
    const o = v * n;
    for (let j = 0; j < n; j++) s += c[off + j] * X[o + j];
    if (s > best) {
      best = s;
      arg = v;
    }
  }
  return arg;
}

/**
 * The row first hit by the ray centre + t·d (t > 0), when every other row keeps at least
 * witnessMargin slack at the hit point (a facet witness, see vertexPass); −1 otherwise.
 */
export function firstHitWitness(A: Float64Array, m: number, n: number, slack: Float64Array, d: Float64Array): number {
  let best = Infinity;
  let hit = -1;
  for (let q = 0; q < m; q++) {
    let ad = 0;
    for (let j = 0; j < n; j++) ad += A[q * n + j] * d[j];
    if (ad <= 1e-12) continue;
    const t = slack[q] / ad;
    if (t < best) {
      best = t;
      hit = q;
    }
  }
  if (hit < 0) return -1;
  for (let q = 0; q < m; q++) {
    if (q === hit) continue;
    let ad = 0;
    for (let j = 0; j < n; j++) ad += A[q * n + j] * d[j];
    if (slack[q] - best * ad < witnessMargin) return -1;
  }
  return hit;
}
