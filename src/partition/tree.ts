/**
 * Binary search tree for point location in a partition (Tøndel, Johansen & Bemporad 2003,
 * "Evaluation of piecewise affine control via binary search tree"): each internal node tests one
 * facet hyperplane a·θ ≤ b of some region, each leaf lists the few regions left, checked in full.
 *
 * The tree is plain data (arrays) so that it serialises to JSON and maps one to one onto the
 * const arrays of the generated C. Child references: r ≥ 0 is an internal node, r < 0 is the
 * leaf −r−1. The left child holds the side a·θ ≤ b.
 */
import { tol } from '../tol.js';
import type { CriticalRegion } from '../mpqp/types.js';
import { hyperplaneKey, linearRange, polytopeVertices, polyLpCounter, type HalfSpaces } from './tree-poly.js';
import { LargestFirst, locatorBytes } from './budget.js';

export const TREE_FORMAT = 'tessera-search-tree';
export const TREE_VERSION = 1;

export interface SearchTree {
  format: typeof TREE_FORMAT;
  version: number;
  /** hash of the table the tree was built for ("sha256:…"), checked when a side file is read */
  tableHash: string;
  ntheta: number;
  /** number of regions of that table */
  regionCount: number;
  /** the distinct hyperplanes used by nodes: a[k]·θ ≤ b[k] sends θ left */
  hyperplanes: { a: number[][]; b: number[] };
  nodeHyperplane: number[];
  nodeLeft: number[];
  nodeRight: number[];
  /** child reference of the root (a leaf when the table has one region) */
  root: number;
  /** leaf k holds regions leafRegions[leafStart[k] .. leafStart[k+1]) in ascending index */
  leafStart: number[];
  leafRegions: number[];
  stats: TreeStats;
}

export interface TreeStats {
  nodes: number;
  leaves: number;
  /** longest root-to-leaf path, in hyperplane tests */
  maxDepth: number;
  meanLeafDepth: number;
  maxLeafSize: number;
  /** LPs solved while building (regions whose vertices were too many to enumerate) */
  lps: number;
  buildSeconds: number;
}

export interface TreeOptions {
  /** stop splitting when a node holds at most this many regions (default 1) */
  leafSize?: number;
  /** hard bound on the depth (default 64) */
  maxDepth?: number;
  /** at most this many hyperplane×region tests per node before candidates are thinned (default 4e6) */
  nodeBudget?: number;
  /** weight of regions duplicated onto both children in the split score (default 0: pure balance, which gave the shallowest trees on our examples) */
  duplicationWeight?: number;
  /** subset count above which a region's sides are decided by LP instead of its vertices (default TREE_VERTEX_BUDGET) */
  vertexBudget?: number;
  /**
   * side overlap: a region goes to each side of a·θ ≤ b that it reaches within `margin` (a region
   * touching the plane goes to both). Set it to the float rounding bound of the node test (see
   * planeMargin) to make the descent safe in float; unset keeps the original rule (tol.radius)
   */
  margin?: number;
  /**
   * with `margin`: a region whose facet on the outer boundary of the partition lies on the plane
   * still goes to both sides (θ just outside the boundary is located within the test slack); the
   * fixed-point trees set it, the float structures keep their own rule
   */
  boundaryBothSides?: boolean;
  /** also stop splitting when the rows of a node's regions sum to at most this (depth-capped tree with short sequential leaves) */
  leafRows?: number;
  /**
   * also try axis-aligned planes θ_j = q at the quartiles of the node's region centres (capped tree):
   * a set of regions that all touch each other's facet planes (a fan around a common face) cannot be
   * split by those planes once touching regions go to both sides, but often can by a plane across it
   */
  axisCandidates?: boolean;
  /** give up (throw TreeTooLargeError) once the tree has more than this many nodes */
  maxNodes?: number;
  /**
   * give up (throw TreeTooLargeError) as soon as the location arrays of the finished tree are sure to
   * pass this many bytes: nodes, leaves and listed regions only grow while the tree is built (every
   * region of a node reaches a child, every pending node ends in at least one leaf), so the bytes of
   * what is built plus what is pending, at the smallest element sizes (locatorMinBytes), bound the
   * final arrays from below. The cost model's plain tree: in 6-D it used to run its full split search
   * for ~10⁴ nodes before maxNodes stopped it
   */
  giveUpBytes?: number;
  /**
   * memory budget of the location arrays in bytes (float layout, see locatorBytes): nodes are then
   * split largest first and the rest become leaves once the next split would exceed it
   */
  maxBytes?: number;
  tableHash?: string;
  onProgress?: (p: { nodes: number; leaves: number; elapsedSeconds: number }) => void;
}

/**
 * Subset count up to which the tree builder enumerates a region's vertices (C(rows, nθ) small
 * solves, once per region) instead of deciding each of its sides by two LPs. A region is tested
 * against hundreds to thousands of planes, so even 10⁵ subsets cost less than its LPs: on the locate
 * bench's 6-D table (1 639 regions) the 27 regions of 19–21 rows, above the old budget of 2·10⁴,
 * took 101 526 LPs and about half of the build.
 */
export const TREE_VERTEX_BUDGET = 200000;

/**
 * Vertices of a region (polytopeVertices), remembered per region object and budget: `emit --search
 * auto` builds several trees over the same regions (the plain tree, the capped one), and in 5-D and
 * 6-D the enumeration is a large part of each build. A region is never changed after it is built.
 */
const vertexCache = new WeakMap<object, Map<number, Float64Array | null>>();
function regionVertices(r: RegionLike, n: number, budget: number): Float64Array | null {
  let byBudget = vertexCache.get(r);
  if (!byBudget) vertexCache.set(r, (byBudget = new Map()));
  let v = byBudget.get(budget);
  if (v === undefined) byBudget.set(budget, (v = polytopeVertices(r, n, budget)));
  return v;
}

/** Thrown when a tree outgrows TreeOptions.maxNodes (the caller then picks another structure). */
export class TreeTooLargeError extends Error {
  constructor(
    public readonly maxNodes: number,
    /** why, in words (the cost model's report line) */
    public readonly reason = `more than ${maxNodes} nodes (over the memory budget)`,
  ) {
    super(`search tree: ${reason}`);
  }
}

/**
 * Smallest bytes the C target can give a hyperplane tree's location arrays (float layout): per node
 * the plane (nθ + 1 floats) and two 16-bit child references, per leaf start and listed region 16 bits
 * (the narrowest index type it prints). A lower bound for TreeOptions.giveUpBytes.
 */
export function locatorMinBytes(ntheta: number, nodes: number, leaves: number, copies: number): number {
  return nodes * (4 * (ntheta + 1) + 4) + (leaves + 1) * 2 + copies * 2;
}

/**
 * Side overlap that makes a hyperplane descent safe in float: twice the rounding bound of
 * fl(a·θ) ≤ fl(b) against a·θ ≤ b with a, b and θ rounded to float, summed from the first product
 * ((nθ + 2)·u·‖a‖₁·|θ|max + u·|b|, u = 2⁻²⁴; DEVELOPERS.md, "Point location in float"), over the
 * largest plane of the partition, plus tol.radius.
 */
export function planeMargin(regions: Pick<CriticalRegion, 'A' | 'b'>[], box: { lower: ArrayLike<number>; upper: ArrayLike<number> }): number {
  const u = 2 ** -24;
  let m = 0;
  for (let j = 0; j < box.lower.length; j++) m = Math.max(m, Math.abs(box.lower[j]), Math.abs(box.upper[j]));
  const n = box.lower.length;
  let worst = 0;
  for (const r of regions)
    r.A.forEach((row, i) => {
      const l1 = row.reduce((s, v) => s + Math.abs(v), 0);
      worst = Math.max(worst, (n + 2) * u * l1 * m + u * Math.abs(r.b[i]));
    });
  return 2 * worst + tol.radius;
}

type RegionLike = Pick<CriticalRegion, 'A' | 'b'> & Partial<Pick<CriticalRegion, 'facets'>>;

/** Which side(s) of a·θ ≤ b a region reaches with positive depth (a region touching only at a facet goes to one side). */
function classify(
  h: HalfSpaces,
  n: number,
  vertices: Float64Array | null,
  a: number[],
  b: number,
  openBoundary: boolean,
  margin: number | undefined,
  boundaryBothSides = false,
): { left: boolean; right: boolean } {
  const [lo, hi] = linearRange(h, n, a, vertices);
  if (margin !== undefined) {
    if (openBoundary && boundaryBothSides) return { left: true, right: true };
    const l = lo < b + margin;
    const r = hi > b - margin;
    return l || r ? { left: l, right: r } : { left: true, right: true };
  }
  let left = lo < b - tol.radius;
  let right = hi > b + tol.radius;
  // A facet on the outer boundary of the partition: θ just outside it (within tol.inside) is
  // still located by sequential search, so the region must be found from both sides.
  if (openBoundary) left = right = true;
  if (!left && !right) left = right = true; // thinner than tol.radius across: keep it reachable
  return { left, right };
}

/** Build the search tree over `regions` (greedy: each node takes the hyperplane that minimises the larger child, then the sum). */
export function buildSearchTree(regions: RegionLike[], ntheta: number, options: TreeOptions = {}): SearchTree {
  const t0 = Date.now();
  const leafSize = options.leafSize ?? 1;
  const maxDepth = options.maxDepth ?? 64;
  const nodeBudget = options.nodeBudget ?? 4e6;
  const dupWeight = options.duplicationWeight ?? 0;
  const lps0 = polyLpCounter.calls;
  const n = ntheta;

  // distinct facet hyperplanes, and per region which of them are its own outer-boundary facets
  const hpIndex = new Map<string, number>();
  const hpA: number[][] = [];
  const hpB: number[] = [];
  const regionHps: number[][] = [];
  const openBoundary: Set<number>[] = [];
  regions.forEach((r) => {
    const own: number[] = [];
    const open = new Set<number>();
    r.A.forEach((row, i) => {
      const { key, sign } = hyperplaneKey(row, r.b[i]);
      let k = hpIndex.get(key);
      if (k === undefined) {
        k = hpA.length;
        hpIndex.set(key, k);
        hpA.push(row.map((v) => sign * v));
        hpB.push(sign * r.b[i]);
      }
      own.push(k);
      const f = r.facets?.[i];
      if (!f || f.kind === 'box' || f.neighbours.length === 0) open.add(k);
    });
    regionHps.push(own);
    openBoundary.push(open);
  });
  const vertices = regions.map((r) => regionVertices(r, n, options.vertexBudget ?? TREE_VERTEX_BUDGET));
  // a point inside each region (the mean of its vertices, or of its rows' nearest points): axis candidates
  const centres = regions.map((r, ri) => {
    const v = vertices[ri];
    const c = new Array<number>(n).fill(0);
    if (v && v.length >= n) {
      const m = v.length / n;
      for (let k = 0; k < m; k++) for (let j = 0; j < n; j++) c[j] += v[k * n + j] / m;
    } else if ((r as Partial<CriticalRegion>).chebyshev) return [...(r as CriticalRegion).chebyshev.center];
    return c;
  });

  // side of every (region, hyperplane) pair, computed on first use: 0 unknown, bit 1 left, bit 2 right
  const H = hpA.length;
  const sideCache = new Uint8Array(regions.length * H);
  const side = (ri: number, k: number): number => {
    const key = ri * H + k;
    let c = sideCache[key];
    if (c === 0) {
      const s = classify(regions[ri], n, vertices[ri], hpA[k], hpB[k], openBoundary[ri].has(k), options.margin, options.boundaryBothSides);
      c = (s.left ? 1 : 0) | (s.right ? 2 : 0);
      sideCache[key] = c;
    }
    return c;
  };

  const tree: SearchTree = {
    format: TREE_FORMAT,
    version: TREE_VERSION,
    tableHash: options.tableHash ?? '',
    ntheta: n,
    regionCount: regions.length,
    ...emptyNodes(),
    stats: { nodes: 0, leaves: 0, maxDepth: 0, meanLeafDepth: 0, maxLeafSize: 0, lps: 0, buildSeconds: 0 },
  };
  const usedHp = new Map<number, number>(); // global hyperplane → index in tree.hyperplanes
  let depthSum = 0;
  let lastProgress = Date.now();

  const makeLeaf = (set: number[], depth: number): number => {
    const k = tree.leafStart.length - 1;
    tree.leafRegions.push(...set);
    tree.leafStart.push(tree.leafRegions.length);
    tree.stats.maxDepth = Math.max(tree.stats.maxDepth, depth);
    tree.stats.maxLeafSize = Math.max(tree.stats.maxLeafSize, set.length);
    depthSum += depth;
    return -k - 1;
  };

  // explicit stack instead of recursion: (set, depth, path hyperplanes, where to store the reference)
  interface Task {
    set: number[];
    depth: number;
    path: Set<number>;
    store: (ref: number) => void;
  }
  // depth first (the original layout), or largest first under a memory budget
  const budget = options.maxBytes;
  const rowsOf = (set: number[]) => set.reduce((s, ri) => s + regions[ri].A.length, 0);
  const queue = new LargestFirst<Task>();
  const stack: Task[] = [];
  // regions listed by pending nodes: with the leaves' lists, a lower bound on the final leaf_region entries
  let pendingCopies = 0;
  const push = (t: Task) => {
    pendingCopies += t.set.length;
    return budget === undefined ? stack.push(t) : queue.push(rowsOf(t.set), t);
  };
  const pending = () => (budget === undefined ? stack.length : queue.size);
  push({ set: regions.map((_, i) => i), depth: 0, path: new Set(), store: (r) => (tree.root = r) });
  let copies = regions.length;
  const nodeBytes = (n + 1) * 4 + 8;
  while (pending() > 0) {
    const task = budget === undefined ? stack.pop()! : queue.pop();
    const { set, depth, path } = task;
    pendingCopies -= set.length;
    if (options.giveUpBytes !== undefined) {
      const atLeast = locatorMinBytes(n, tree.nodeHyperplane.length, tree.leafStart.length - 1 + pending() + 1, tree.leafRegions.length + pendingCopies + set.length);
      if (atLeast > options.giveUpBytes) throw new TreeTooLargeError(tree.nodeHyperplane.length, `location arrays of at least ${atLeast} B, over the budget of ${Math.floor(options.giveUpBytes)} B, after ${tree.nodeHyperplane.length} nodes`);
    }
    if (options.onProgress && Date.now() - lastProgress > 100) {
      lastProgress = Date.now();
      options.onProgress({ nodes: tree.nodeHyperplane.length, leaves: tree.leafStart.length - 1, elapsedSeconds: (Date.now() - t0) / 1000 });
    }
    if (set.length <= leafSize || depth >= maxDepth || (options.leafRows !== undefined && rowsOf(set) <= options.leafRows)) {
      task.store(makeLeaf(set, depth));
      continue;
    }
    const candSet = new Set<number>();
    for (const ri of set) for (const k of regionHps[ri]) if (!path.has(k)) candSet.add(k);
    let cands = [...candSet].sort((x, y) => x - y);
    const maxCands = Math.max(8, Math.floor(nodeBudget / set.length));
    if (cands.length > maxCands) {
      const step = cands.length / maxCands;
      cands = Array.from({ length: maxCands }, (_, i) => cands[Math.floor(i * step)]);
    }
    // score: the larger child, plus the regions duplicated onto both sides weighted by `duplicationWeight`
    let best = -1;
    let bestScore = Infinity;
    let bestSum = Infinity;
    // extra axis-aligned candidates: index H + e into extraA/extraB (sides computed per node, no cache)
    const extraA: number[][] = [];
    const extraB: number[] = [];
    if (options.axisCandidates && set.length > 1) {
      for (let j = 0; j < n; j++) {
        const cs = set.map((ri) => centres[ri][j]).sort((x, y) => x - y);
        for (const q of [0.25, 0.5, 0.75]) {
          const v = cs[Math.min(cs.length - 1, Math.floor(q * cs.length))];
          if (extraB.length > 0 && extraA[extraA.length - 1][j] === 1 && extraB[extraB.length - 1] === v) continue;
          const a = new Array<number>(n).fill(0);
          a[j] = 1;
          extraA.push(a);
          extraB.push(v);
        }
      }
    }
    const extraSides = extraA.map((a, e) => set.map((ri) => {
      const c = classify(regions[ri], n, vertices[ri], a, extraB[e], false, options.margin);
      return (c.left ? 1 : 0) | (c.right ? 2 : 0);
    }));
    const sideOf = (q: number, k: number): number => (k >= H ? extraSides[k - H][q] : side(set[q], k));
    const allCands = [...cands, ...extraA.map((_, e) => H + e)];
    for (const k of allCands) {
      let nl = 0;
      let nr = 0;
      for (let q = 0; q < set.length; q++) {
        const s = sideOf(q, k);
        nl += s & 1;
        nr += s >> 1;
      }
      const mx = Math.max(nl, nr);
      if (mx >= set.length) continue;
      const score = mx + dupWeight * (nl + nr - set.length);
      if (score < bestScore || (score === bestScore && nl + nr < bestSum)) {
        best = k;
        bestScore = score;
        bestSum = nl + nr;
      }
    }
    if (best < 0) {
      task.store(makeLeaf(set, depth));
      continue;
    }
    const leftSet = set.filter((_, q) => (sideOf(q, best) & 1) !== 0);
    const rightSet = set.filter((_, q) => (sideOf(q, best) & 2) !== 0);
    if (budget !== undefined) {
      const grown = copies + leftSet.length + rightSet.length - set.length;
      if (locatorBytes(tree.nodeHyperplane.length + 1, nodeBytes, tree.leafStart.length - 1 + pending() + 2, grown, regions.length) > budget) {
        task.store(makeLeaf(set, depth));
        continue;
      }
      copies = grown;
    }
    let hi = best < H ? usedHp.get(best) : undefined;
    if (hi === undefined) {
      hi = tree.hyperplanes.a.length;
      if (best < H) usedHp.set(best, hi);
      tree.hyperplanes.a.push(best < H ? hpA[best] : extraA[best - H]);
      tree.hyperplanes.b.push(best < H ? hpB[best] : extraB[best - H]);
    }
    const node = tree.nodeHyperplane.length;
    if (options.maxNodes !== undefined && node >= options.maxNodes) throw new TreeTooLargeError(options.maxNodes);
    tree.nodeHyperplane.push(hi);
    tree.nodeLeft.push(0);
    tree.nodeRight.push(0);
    task.store(node);
    const childPath = best < H ? new Set(path).add(best) : path;
    // push right first so the left subtree is numbered first (deterministic layout)
    if (budget === undefined) {
      push({ set: rightSet, depth: depth + 1, path: childPath, store: (r) => (tree.nodeRight[node] = r) });
      push({ set: leftSet, depth: depth + 1, path: childPath, store: (r) => (tree.nodeLeft[node] = r) });
    } else {
      push({ set: leftSet, depth: depth + 1, path: childPath, store: (r) => (tree.nodeLeft[node] = r) });
      push({ set: rightSet, depth: depth + 1, path: childPath, store: (r) => (tree.nodeRight[node] = r) });
    }
  }
  const leaves = tree.leafStart.length - 1;
  tree.stats.nodes = tree.nodeHyperplane.length;
  tree.stats.leaves = leaves;
  tree.stats.meanLeafDepth = leaves > 0 ? depthSum / leaves : 0;
  tree.stats.lps = polyLpCounter.calls - lps0;
  tree.stats.buildSeconds = (Date.now() - t0) / 1000;
  return tree;
}

/** Depth of every leaf, found by walking the node arrays from the root. */
export function leafDepths(tree: Pick<SearchTree, 'root' | 'nodeLeft' | 'nodeRight' | 'leafStart'>): number[] {
  const depth = new Array<number>(tree.leafStart.length - 1).fill(-1);
  const stack: [number, number][] = [[tree.root, 0]];
  while (stack.length) {
    const [ref, d] = stack.pop()!;
    if (ref < 0) depth[-ref - 1] = d;
    else {
      stack.push([tree.nodeLeft[ref], d + 1]);
      stack.push([tree.nodeRight[ref], d + 1]);
    }
  }
  return depth;
}

/** The leaf that θ falls into (same arithmetic order as the generated C). */
export function locateLeaf(tree: SearchTree, theta: ArrayLike<number>): number {
  let ref = tree.root;
  const n = tree.ntheta;
  for (let d = 0; d < tree.stats.maxDepth && ref >= 0; d++) {
    const k = tree.nodeHyperplane[ref];
    const a = tree.hyperplanes.a[k];
    let s = 0;
    for (let j = 0; j < n; j++) s += a[j] * theta[j];
    ref = s <= tree.hyperplanes.b[k] ? tree.nodeLeft[ref] : tree.nodeRight[ref];
  }
  return -ref - 1;
}

/**
 * Point location through the tree: index of the first region of θ's leaf that holds θ within
 * `slack`, or −1. Same result as the generated double-precision C, bit for bit.
 */
export function locateTree(tree: SearchTree, theta: ArrayLike<number>, regions: Pick<CriticalRegion, 'A' | 'b'>[], slack: number = tol.inside): number {
  const leaf = locateLeaf(tree, theta);
  return firstHolding(tree.leafRegions, tree.leafStart[leaf], tree.leafStart[leaf + 1], theta, regions, tree.ntheta, slack);
}

/** The first region of list[from, to) that holds θ within `slack` (a leaf's final check), or −1. */
export function firstHolding(list: number[], from: number, to: number, theta: ArrayLike<number>, regions: Pick<CriticalRegion, 'A' | 'b'>[], n: number, slack: number): number {
  for (let k = from; k < to; k++) {
    const r = regions[list[k]];
    let inside = true;
    for (let i = 0; i < r.A.length && inside; i++) {
      let s = 0;
      for (let j = 0; j < n; j++) s += r.A[i][j] * theta[j];
      if (!(s <= r.b[i] + slack)) inside = false; // NaN θ lies in no region
    }
    if (inside) return list[k];
  }
  return -1;
}

/** The node and leaf arrays of a tree with nothing in it yet (the builder and `collapseTree` fill them). */
function emptyNodes(): Pick<SearchTree, 'hyperplanes' | 'nodeHyperplane' | 'nodeLeft' | 'nodeRight' | 'root' | 'leafStart' | 'leafRegions'> {
  return { hyperplanes: { a: [], b: [] }, nodeHyperplane: [], nodeLeft: [], nodeRight: [], root: -1, leafStart: [0], leafRegions: [] };
}

/**
 * The same tree with every subtree whose regions hold at most `leafRows` rows in all turned into one
 * leaf (its regions: the union of the subtree's leaves, in ascending index). Every region of a node
 * reaches at least one of its children, so the union is the node's own set, and a θ that reached a
 * leaf below the node holding region R now reaches the new leaf, which lists R: the side overlap, and
 * so the float safety, carries over. Nodes and leaves are renumbered depth first, left first.
 */
export function collapseTree(tree: SearchTree, rowsOf: (region: number) => number, leafRows: number): SearchTree {
  // regions below every reference, bottom up (children before parents: nodes are created parent first)
  const below = new Map<number, number[]>();
  const union = (ref: number): number[] => {
    if (ref < 0) return tree.leafRegions.slice(tree.leafStart[-ref - 1], tree.leafStart[-ref]);
    return below.get(ref)!;
  };
  for (let node = tree.nodeLeft.length - 1; node >= 0; node--) {
    const set = new Set([...union(tree.nodeLeft[node]), ...union(tree.nodeRight[node])]);
    below.set(node, [...set].sort((a, b) => a - b));
  }
  const out: SearchTree = {
    ...tree,
    ...emptyNodes(),
    stats: { ...tree.stats, nodes: 0, leaves: 0, maxDepth: 0, meanLeafDepth: 0, maxLeafSize: 0 },
  };
  const usedHp = new Map<number, number>();
  let depthSum = 0;
  const stack: { ref: number; depth: number; store: (r: number) => void }[] = [{ ref: tree.root, depth: 0, store: (r) => (out.root = r) }];
  while (stack.length) {
    const { ref, depth, store } = stack.pop()!;
    const set = union(ref);
    if (ref < 0 || set.reduce((s, r) => s + rowsOf(r), 0) <= leafRows) {
      const k = out.leafStart.length - 1;
      out.leafRegions.push(...set);
      out.leafStart.push(out.leafRegions.length);
      out.stats.maxDepth = Math.max(out.stats.maxDepth, depth);
      out.stats.maxLeafSize = Math.max(out.stats.maxLeafSize, set.length);
      depthSum += depth;
      store(-k - 1);
      continue;
    }
    const h = tree.nodeHyperplane[ref];
    let hi = usedHp.get(h);
    if (hi === undefined) {
      hi = out.hyperplanes.a.length;
      usedHp.set(h, hi);
      out.hyperplanes.a.push(tree.hyperplanes.a[h]);
      out.hyperplanes.b.push(tree.hyperplanes.b[h]);
    }
    const node = out.nodeHyperplane.length;
    out.nodeHyperplane.push(hi);
    out.nodeLeft.push(0);
    out.nodeRight.push(0);
    store(node);
    stack.push({ ref: tree.nodeRight[ref], depth: depth + 1, store: (r) => (out.nodeRight[node] = r) });
    stack.push({ ref: tree.nodeLeft[ref], depth: depth + 1, store: (r) => (out.nodeLeft[node] = r) });
  }
  const leaves = out.leafStart.length - 1;
  out.stats.nodes = out.nodeHyperplane.length;
  out.stats.leaves = leaves;
  out.stats.meanLeafDepth = leaves > 0 ? depthSum / leaves : 0;
  return out;
}
