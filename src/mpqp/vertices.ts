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

/** The vertices of a polytope: coordinates (n per vertex) and the rows tight at each (sorted); plain arrays, since V8 allocates many small typed arrays slowly. */
export interface VertexSet {
  n: number;
  x: number[][];
  tight: number[][];
}

/**
 * A new point of n coordinates for a vertex list: a plain array whose elements are doubles from
 * birth. A box corner with whole-number coordinates would otherwise start as an array of small
 * integers while cut points hold doubles, and V8 would deoptimise the vertex loops on the second
 * elements kind ("wrong map"). Every vertex array of vertices.ts, cover.ts and the facet frames is
 * made here.
 */
export function newPoint(n: number): number[] {
  // up to 6 coordinates an array literal: packed double elements from birth, with no call to fill
  switch (n) {
    case 1:
      return [0.5];
    case 2:
      return [0.5, 0.5];
    case 3:
      return [0.5, 0.5, 0.5];
    case 4:
      return [0.5, 0.5, 0.5, 0.5];
    case 5:
      return [0.5, 0.5, 0.5, 0.5, 0.5];
    case 6:
      return [0.5, 0.5, 0.5, 0.5, 0.5, 0.5];
    default:
      return new Array<number>(n).fill(0.5);
  }
}

/**
 * The 2ⁿ corners of the box lo ≤ θ ≤ hi, whose sides are rows boxRow + 2j (θ_j ≤ hi_j) and
 * boxRow + 2j + 1 (−θ_j ≤ −lo_j) of the caller's A.
 */
export function boxVertices(n: number, lo: ArrayLike<number>, hi: ArrayLike<number>, boxRow: number): VertexSet {
  const x: number[][] = [];
  const tight: number[][] = [];
  for (let mask = 0; mask < 1 << n; mask++) {
    const v = newPoint(n);
    const t = new Array<number>(n);
    for (let j = 0; j < n; j++) {
      const up = (mask >> j) & 1;
      v[j] = up ? hi[j] : lo[j];
      t[j] = boxRow + 2 * j + (up ? 0 : 1);
    }
    x.push(v);
    tight.push(t);
  }
  return { n, x, tight };
}

/** Scratch for the edge search's common rows (grown on demand; one per thread). */
const cutScratch = { buf: new Int32Array(64), s: new Float64Array(64) };

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
 * Sorted intersection of two sorted index lists into `out`; returns its length when that is at least
 * `need`, else some number below `need` (the scan stops once either list has lost more entries than
 * leave `need` in common; `out` is then partial).
 */
function intersect(a: readonly number[], b: readonly number[], out: Int32Array, need: number): number {
  let i = 0;
  let j = 0;
  let k = 0;
  const spareA = a.length - need;
  const spareB = b.length - need;
  while (i < a.length && j < b.length) {
    if (i - k > spareA || j - k > spareB) return k;
    if (a[i] === b[j]) {
      out[k++] = a[i];
      i++;
      j++;
    } else if (a[i] < b[j]) i++;
    else j++;
  }
  return k;
}

/**
 * The face table of `cutVertices`' ordered edge search (one per thread, grown on demand): slot heads
 * and, per entry, its face hash, inside vertex and next entry; `cand` the collected candidates.
 */
const faces = { head: new Int32Array(64), mask: 63, key: new Int32Array(256), q: new Int32Array(256), next: new Int32Array(256), cand: new Int32Array(256) };

/** Fill `faces` with every simple (n tight rows) inside vertex under the hashes of its n faces. */
function faceTable(tight: readonly (readonly number[])[], inside: readonly number[], n: number): void {
  const entries = inside.length * n;
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
  for (const q of inside) {
    const Tq = tight[q];
    if (Tq.length !== n) continue;
    for (let omit = 0; omit < n; omit++) {
      const h = faceKey(Tq, omit);
      const slot = h & faces.mask;
      faces.key[e] = h;
      faces.q[e] = q;
      faces.next[e] = faces.head[slot];
      faces.head[slot] = e;
      e++;
    }
  }
}

/** Hash of the sorted rows of T without T[omit] (collisions are checked by the caller). */
function faceKey(T: readonly number[], omit: number): number {
  let h = 0x811c9dc5;
  for (let i = 0; i < T.length; i++) {
    if (i === omit) continue;
    h = Math.imul(h ^ T[i], 0x01000193);
  }
  return h | 0;
}

/**
 * t's first k rows with r inserted before the first larger row (not when equal to a row met
 * first); at the end when none is larger. The list is made at its final length (a list grown by
 * push reserves room for ~16 more entries: most of the vertex lists' garbage).
 */
function withRow(t: ArrayLike<number>, k: number, r: number): number[] {
  let at = k;
  let has = false;
  for (let i = 0; i < k; i++) {
    if (r < t[i]) {
      at = i;
      break;
    }
    if (t[i] === r) {
      has = true;
      break;
    }
  }
  const out = new Array<number>(has ? k : k + 1);
  if (has) for (let i = 0; i < k; i++) out[i] = t[i];
  else {
    for (let i = 0; i < at; i++) out[i] = t[i];
    out[at] = r;
    for (let i = at; i < k; i++) out[i + 1] = t[i];
  }
  return out;
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
  const cnt = V.x.length;
  if (cutScratch.s.length < cnt) cutScratch.s = new Float64Array(2 * cnt);
  const s = cutScratch.s; // entries 0 … cnt − 1 written below before any read
  let outside = 0;
  for (let v = 0; v < cnt; v++) {
    let t = -b[r];
    for (let j = 0; j < n; j++) t += A[r * n + j] * V.x[v][j];
    s[v] = t;
    if (t > eps) outside++;
  }
  if (outside === 0) {
    for (let v = 0; v < cnt; v++) if (s[v] >= -eps) V.tight[v] = withRow(V.tight[v], V.tight[v].length, r);
    return true;
  }
  const x: number[][] = [];
  const tight: number[][] = [];
  for (let v = 0; v < cnt; v++) {
    if (s[v] > eps) continue;
    x.push(V.x[v]);
    tight.push(s[v] >= -eps ? withRow(V.tight[v], V.tight[v].length, r) : V.tight[v]);
  }
  // edges between simple vertices (n tight rows): the two share n − 1 rows, found by a hash of
  // each inside vertex's (n − 1)-row subsets when there are many pairs (all pairs tried when few);
  // pairs with a degenerate vertex take the rank test
  const outsideAll: number[] = [];
  const insideAll: number[] = [];
  for (let q = 0; q < cnt; q++) {
    if (s[q] > eps) outsideAll.push(q);
    else if (s[q] < -eps) insideAll.push(q);
  }
  const hashed = hashEdges === 'ordered' ? false : (hashEdges ?? outsideAll.length * insideAll.length > 4 * n * (outsideAll.length + insideAll.length));
  const byFace = hashed ? new Map<number, number[]>() : null;
  const degenerateInside: number[] = [];
  for (const q of insideAll) {
    const Tq = V.tight[q];
    if (Tq.length !== n) {
      degenerateInside.push(q);
      continue;
    }
    if (!hashed) continue;
    for (let omit = 0; omit < n; omit++) {
      const key = faceKey(Tq, omit);
      const list = byFace!.get(key);
      if (list) list.push(q);
      else byFace!.set(key, [q]);
    }
  }
  const addCrossing = (p: number, q: number, common: Int32Array, k: number): boolean => {
    if (x.length >= maxVertices) return false;
    const t = s[p] / (s[p] - s[q]);
    const xv = newPoint(n);
    for (let j = 0; j < n; j++) xv[j] = V.x[p][j] + t * (V.x[q][j] - V.x[p][j]);
    x.push(xv);
    tight.push(withRow(common, k, r));
    return true;
  };
  // the all-pairs order through a hash: every simple inside vertex listed under its n (n − 1)-row
  // faces (chained in typed arrays); an outside vertex collects the inside vertices sharing one of
  // its faces' hashes, ascending and once each, and tests those as the all-pairs loop would. A pair
  // with n − 1 common rows shares a face, so the crossings and their order are the all-pairs ones.
  const ordered = hashEdges === 'ordered' || (!hashed && hashEdges === undefined && outsideAll.length * insideAll.length > 32);
  if (ordered) faceTable(V.tight, insideAll, n);
  for (const p of outsideAll) {
    const Tp = V.tight[p];
    if (cutScratch.buf.length < Tp.length) cutScratch.buf = new Int32Array(2 * Tp.length);
    const buf = cutScratch.buf;
    if (Tp.length === n && ordered) {
      const ft = faces;
      let nc = 0;
      for (let omit = 0; omit < n; omit++) {
        const h = faceKey(Tp, omit);
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
        const k = intersect(Tp, V.tight[q], buf, n - 1);
        if (k === n - 1 && !addCrossing(p, q, buf, k)) return false;
      }
    } else if (Tp.length === n) {
      if (hashed) {
        for (let omit = 0; omit < n; omit++) {
          const list = byFace!.get(faceKey(Tp, omit));
          if (!list) continue;
          for (const q of list) {
            const k = intersect(Tp, V.tight[q], buf, n - 1);
            if (k === n - 1 && !addCrossing(p, q, buf, k)) return false;
          }
        }
      } else
        for (const q of insideAll) {
          const Tq = V.tight[q];
          if (Tq.length !== n) continue; // with the degenerate ones below
          const k = intersect(Tp, Tq, buf, n - 1);
          if (k === n - 1 && !addCrossing(p, q, buf, k)) return false;
        }
    }
    const others = Tp.length === n ? degenerateInside : insideAll;
    for (const q of others) {
      const Tq = V.tight[q];
      if (cutScratch.buf.length < Tq.length) cutScratch.buf = new Int32Array(2 * Tq.length);
      const k = intersect(Tp, Tq, cutScratch.buf, n - 1);
      if (k < n - 1) continue;
      if (rankOf(A, n, cutScratch.buf, k) !== n - 1) continue;
      if (!addCrossing(p, q, cutScratch.buf, k)) return false;
    }
  }
  V.x = x;
  V.tight = tight;
  return true;
}

/**
 * The least of `bound(c, W)` (a weak-duality bound on c·θ, farkasBound) over W an n-row subset of the rows tight at a vertex (all of them when there are n; at a degenerate vertex
 * up to `maxTries` subsets in lexicographic order); +∞ when none proves anything.
 */
export function vertexBound(
  c: ArrayLike<number>,
  T: readonly number[],
  n: number,
  bound: (c: ArrayLike<number>, W: ArrayLike<number>) => number,
  maxTries = 32,
): number {
  const k = T.length;
  if (k < n) return Infinity;
  if (k === n) return bound(c, T);
  const idx = new Int32Array(n);
  for (let i = 0; i < n; i++) idx[i] = i;
  const W = new Int32Array(n);
  let best = Infinity;
  for (let tries = 0; tries < maxTries; tries++) {
    for (let i = 0; i < n; i++) W[i] = T[idx[i]];
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
 * at the end is one of those or a box side, this is the region's own vertex list.
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
  const V = boxVertices(n, lo, up, boxRow);
  const eps = 1e-10;
  for (let q = 0; q < boxRow; q++) if (sure[q] && !cutVertices(V, A, b, q, eps, maxVertices)) return null;
  const toLp = new Uint8Array(m);
  const d = new Float64Array(n);
  const vLo = new Float64Array(n);
  const vHi = new Float64Array(n);
  // the vertices' coordinates copied into one flat array after every cut (the row and argmax scans
  // below read them contiguously instead of through one array per vertex: the same products, in
  // the same order)
  let X = flatScratch.x;
  const vertexBox = (): void => {
    vLo.fill(Infinity);
    vHi.fill(-Infinity);
    if (X.length < V.x.length * n) X = flatScratch.x = new Float64Array(2 * V.x.length * n);
    let o = 0;
    for (const x of V.x)
      for (let j = 0; j < n; j++) {
        const t = x[j];
        X[o++] = t;
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
      for (let v = 0, cnt = V.x.length; v < cnt; v++) {
        let s = -b[r];
        const o = v * n;
        for (let j = 0; j < n; j++) s += A[r * n + j] * X[o + j];
        if (s > worst) {
          worst = s;
          wv = v;
        }
      }
      if (wv < 0) break;
      for (let j = 0; j < n; j++) d[j] = V.x[wv][j] - center[j];
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
  for (let q = boxRow; q < m; q++) {
    if (sure[q] || !alive[q]) continue;
    // no vertex on the side (box corners and points cut on box edges keep the side's coordinate exactly): nothing to aim at
    const j0 = (q - boxRow) >> 1;
    if ((q - boxRow) & 1 ? vLo[j0] > lo[j0] : vHi[j0] < up[j0]) continue;
    let k = 0;
    d.fill(0);
    for (let v = 0; v < V.x.length; v++) {
      if (!V.tight[v].includes(q)) continue;
      k++;
      for (let j = 0; j < n; j++) d[j] += V.x[v][j];
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
      const v = argmaxFlat(X, V.x.length, n, e, 0);
      if (v < 0 || breaksAny(A, b, n, V.x[v], toLp, boxRow)) continue; // not the region's own side: to its LP
      const value = vertexBound(e, V.tight[v], n, bound);
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
    const v = argmaxFlat(X, V.x.length, n, A, r * n);
    if (v < 0) continue;
    const c = A.subarray(r * n, (r + 1) * n);
    if (vertexBound(c, V.tight[v], n, bound) <= b[r] + redundancyTol) alive[r] = 0;
  }
  return V;
}

/** Whether x breaks one of the rows flagged in `rows` (of the first `m`) by more than breakMargin. */
function breaksAny(A: Float64Array, b: Float64Array, n: number, x: readonly number[], rows: Uint8Array, m: number): boolean {
  for (let q = 0; q < m; q++) {
    if (!rows[q]) continue;
    let s = -b[q];
    for (let j = 0; j < n; j++) s += A[q * n + j] * x[j];
    if (s > breakMargin) return true;
  }
  return false;
}

/** vertexPass's flat copy of the vertex coordinates (n per vertex; one per thread, grown on demand) */
const flatScratch = { x: new Float64Array(256) };

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
