/**
 * Axis-aligned bounding-box tree for point location (after Christophersen, Kvasnica, Jones &
 * Morari 2007, "Efficient evaluation of piecewise control laws defined over a large number of
 * polyhedra"): every region is replaced by its bounding box; each internal node compares one
 * coordinate θ[axis] ≤ split (no multiplication), each leaf lists, in ascending region index, every
 * region whose box reaches into the leaf's cell, and those are then tested in full.
 *
 * Memory grows with the regions, not with the cuts: a region is copied only into the leaves whose
 * cells its bounding box overlaps, and the builder stops splitting a node once its candidates' rows
 * fit the leaf budget, so the index arrays stay a small multiple of the region count.
 *
 * Float safety by construction: every split value is a float (so the double and float builds
 * compare against the same number), and a region is sent to each side its box reaches within
 * `margin`, which covers the rounding of θ to float (u·|θ|max, u = 2⁻²⁴) and the region-test slack.
 * See DEVELOPERS.md, "Point location in float".
 *
 * Child references as in the hyperplane tree: r ≥ 0 is an internal node, r < 0 the leaf −r−1; the
 * left child holds θ[axis] ≤ split.
 */
import { tol } from '../tol.js';
import type { CriticalRegion } from '../mpqp/types.js';
import { linearRange, polytopeVertices, type HalfSpaces } from './tree-poly.js';
import { LargestFirst, locatorBytes } from './budget.js';
import { firstHolding } from './tree.js';

/** Float-layout bytes of one box-tree node: split (4), axis (2), two children (4 each, conservatively). */
export const BOX_NODE_BYTES = 14;

export const BOXTREE_FORMAT = 'tessera-box-tree';

export interface BoxTree {
  format: typeof BOXTREE_FORMAT;
  ntheta: number;
  regionCount: number;
  /** per node: the compared coordinate and the split value (a float, exactly) */
  nodeAxis: number[];
  nodeSplit: number[];
  nodeLeft: number[];
  nodeRight: number[];
  root: number;
  leafStart: number[];
  leafRegions: number[];
  /** the overlap used when assigning regions to sides */
  margin: number;
  stats: { nodes: number; leaves: number; maxDepth: number; maxLeafSize: number; maxLeafRows: number; copies: number; buildSeconds: number };
}

export interface BoxTreeOptions {
  /** stop splitting a node once the rows of its regions sum to at most this (default 48) */
  leafRows?: number;
  /** hard bound on the depth (default 48) */
  maxDepth?: number;
  /** weight of copied rows in the split score (default 0.5) */
  duplicationWeight?: number;
  /** overlap of the sides (default: boxMargin of the box) */
  margin?: number;
  /**
   * memory budget of the location arrays in bytes (float layout, see locatorBytes): nodes are split
   * largest first and the rest become leaves once the next split would exceed it
   */
  maxBytes?: number;
}

/** Unit roundoff of IEEE single precision (2⁻²⁴): a machine constant, not a tolerance. */
export const FLOAT_UNIT_ROUNDOFF = 2 ** -24;

/** Default side overlap: rounding of θ to float (4u·|θ|max, with room to spare) plus 100·tol.inside for the region-test slack. */
export function boxMargin(box: { lower: ArrayLike<number>; upper: ArrayLike<number> }): number {
  let m = 0;
  for (let j = 0; j < box.lower.length; j++) m = Math.max(m, Math.abs(box.lower[j]), Math.abs(box.upper[j]));
  return 4 * FLOAT_UNIT_ROUNDOFF * m + 100 * tol.inside;
}

/** Bounding box of a region: from its vertices when few enough, else 2·nθ LPs. Flat [lo0, hi0, lo1, hi1, …]. */
export function regionBounds(r: HalfSpaces, n: number): Float64Array {
  const v = polytopeVertices(r, n, 3000);
  const out = new Float64Array(2 * n);
  for (let j = 0; j < n; j++) {
    const e = new Array<number>(n).fill(0);
    e[j] = 1;
    const [lo, hi] = linearRange(r, n, e, v);
    out[2 * j] = lo;
    out[2 * j + 1] = hi;
  }
  return out;
}

type RegionLike = Pick<CriticalRegion, 'A' | 'b'>;

export function buildBoxTree(regions: RegionLike[], ntheta: number, box: { lower: ArrayLike<number>; upper: ArrayLike<number> }, options: BoxTreeOptions = {}): BoxTree {
  const t0 = Date.now();
  const n = ntheta;
  const leafRows = options.leafRows ?? 48;
  const maxDepth = options.maxDepth ?? 48;
  const w = options.duplicationWeight ?? 0.5;
  const margin = options.margin ?? boxMargin(box);
  const bounds = regions.map((r) => regionBounds(r, n));
  const rows = regions.map((r) => r.A.length);
  const tree: BoxTree = {
    format: BOXTREE_FORMAT,
    ntheta: n,
    regionCount: regions.length,
    nodeAxis: [],
    nodeSplit: [],
    nodeLeft: [],
    nodeRight: [],
    root: -1,
    leafStart: [0],
    leafRegions: [],
    margin,
    stats: { nodes: 0, leaves: 0, maxDepth: 0, maxLeafSize: 0, maxLeafRows: 0, copies: 0, buildSeconds: 0 },
  };
  const makeLeaf = (set: number[], depth: number): number => {
    const k = tree.leafStart.length - 1;
    const sorted = [...set].sort((x, y) => x - y);
    tree.leafRegions.push(...sorted);
    tree.leafStart.push(tree.leafRegions.length);
    tree.stats.maxDepth = Math.max(tree.stats.maxDepth, depth);
    tree.stats.maxLeafSize = Math.max(tree.stats.maxLeafSize, set.length);
    tree.stats.maxLeafRows = Math.max(tree.stats.maxLeafRows, set.reduce((s, r) => s + rows[r], 0));
    return -k - 1;
  };
  interface Task {
    set: number[];
    depth: number;
    store: (ref: number) => void;
  }
  const budget = options.maxBytes ?? Infinity;
  const queue = new LargestFirst<Task>();
  const rowsOf = (set: number[]) => set.reduce((s, r) => s + rows[r], 0);
  queue.push(0, { set: regions.map((_, i) => i), depth: 0, store: (r) => (tree.root = r) });
  // bytes if every pending node became a leaf now
  let copies = regions.length;
  let pendingLeaves = 1;
  while (queue.size > 0) {
    const { set, depth, store } = queue.pop();
    const total = rowsOf(set);
    pendingLeaves--;
    if (total <= leafRows || set.length <= 1 || depth >= maxDepth) {
      store(makeLeaf(set, depth));
      continue;
    }
    // best split over every axis and every box bound of the set: rows left / right by prefix sums
    let best: { axis: number; split: number; score: number; sum: number } | null = null;
    for (let j = 0; j < n; j++) {
      const byLo = [...set].sort((x, y) => bounds[x][2 * j] - bounds[y][2 * j]);
      const byHi = [...set].sort((x, y) => bounds[x][2 * j + 1] - bounds[y][2 * j + 1]);
      const loV = byLo.map((r) => bounds[r][2 * j]);
      const hiV = byHi.map((r) => bounds[r][2 * j + 1]);
      const loRows = [0];
      for (const r of byLo) loRows.push(loRows[loRows.length - 1] + rows[r]);
      const hiRows = [0];
      for (const r of byHi) hiRows.push(hiRows[hiRows.length - 1] + rows[r]);
      // first index with v ≥ x (v ascending)
      const lowerBound = (v: number[], x: number): number => {
        let a = 0;
        let b = v.length;
        while (a < b) {
          const m = (a + b) >> 1;
          if (v[m] < x) a = m + 1;
          else b = m;
        }
        return a;
      };
      const upperBound = (v: number[], x: number): number => {
        let a = 0;
        let b = v.length;
        while (a < b) {
          const m = (a + b) >> 1;
          if (v[m] <= x) a = m + 1;
          else b = m;
        }
        return a;
      };
      const cands = new Set<number>();
      for (const v of loV) cands.add(Math.fround(v));
      for (const v of hiV) cands.add(Math.fround(v));
      for (const s of cands) {
        // left: lo < s + margin; right: hi > s − margin
        const left = loRows[lowerBound(loV, s + margin)];
        const right = total - hiRows[upperBound(hiV, s - margin)];
        const mx = Math.max(left, right);
        if (mx >= total) continue;
        const score = mx + w * (left + right - total);
        if (!best || score < best.score || (score === best.score && left + right < best.sum)) best = { axis: j, split: s, score, sum: left + right };
      }
    }
    if (!best) {
      store(makeLeaf(set, depth));
      continue;
    }
    const { axis, split } = best;
    const leftSet = set.filter((r) => bounds[r][2 * axis] < split + margin);
    const rightSet = set.filter((r) => bounds[r][2 * axis + 1] > split - margin);
    const grown = copies + leftSet.length + rightSet.length - set.length;
    if (locatorBytes(tree.nodeAxis.length + 1, BOX_NODE_BYTES, tree.leafStart.length - 1 + pendingLeaves + 2, grown, regions.length) > budget) {
      store(makeLeaf(set, depth));
      continue;
    }
    copies = grown;
    pendingLeaves += 2;
    const node = tree.nodeAxis.length;
    tree.nodeAxis.push(axis);
    tree.nodeSplit.push(split);
    tree.nodeLeft.push(0);
    tree.nodeRight.push(0);
    store(node);
    queue.push(rowsOf(leftSet), { set: leftSet, depth: depth + 1, store: (r) => (tree.nodeLeft[node] = r) });
    queue.push(rowsOf(rightSet), { set: rightSet, depth: depth + 1, store: (r) => (tree.nodeRight[node] = r) });
  }
  tree.stats.nodes = tree.nodeAxis.length;
  tree.stats.leaves = tree.leafStart.length - 1;
  tree.stats.copies = tree.leafRegions.length;
  tree.stats.buildSeconds = (Date.now() - t0) / 1000;
  return tree;
}

/** The leaf θ falls into (double arithmetic; the float build rounds θ first, see evaluateArrays). */
export function locateBoxLeaf(tree: Pick<BoxTree, 'root' | 'nodeAxis' | 'nodeSplit' | 'nodeLeft' | 'nodeRight' | 'stats'>, theta: ArrayLike<number>): number {
  let ref = tree.root;
  for (let d = 0; d < tree.stats.maxDepth && ref >= 0; d++) ref = theta[tree.nodeAxis[ref]] <= tree.nodeSplit[ref] ? tree.nodeLeft[ref] : tree.nodeRight[ref];
  return -ref - 1;
}

/** Point location through the box tree: first region of θ's leaf holding θ within `slack`, or −1. */
export function locateBoxTree(tree: BoxTree, theta: ArrayLike<number>, regions: RegionLike[], slack: number = tol.inside): number {
  const leaf = locateBoxLeaf(tree, theta);
  return firstHolding(tree.leafRegions, tree.leafStart[leaf], tree.leafStart[leaf + 1], theta, regions, tree.ntheta, slack);
}
