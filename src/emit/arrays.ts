/**
 * The flat arrays behind the generated code, built once from a table (and its search tree), with an
 * evaluator that repeats the generated C's arithmetic exactly: in double it is the C double build;
 * in float every product and sum is rounded with Math.fround, which is exact IEEE single precision
 * (a product of two floats is exact in double, and a double-rounded float sum is correctly rounded).
 */
import { tol } from '../tol.js';
import type { TableFile } from '../table/format.js';
import { leafDepths, type SearchTree } from '../partition/tree.js';
import { regionBounds, type BoxTree } from '../partition/boxtree.js';
import { clampComparisons } from '../table/clamp.js';
import { seededRandom } from './sample.js';
import { gridCell, gridSureCells, type GridIndex } from './grid.js';

export type Precision = 'float' | 'double';
/**
 * Point-location structures: `tree` the hyperplane search tree (one region per leaf), `capped` a
 * hyperplane tree with a depth cap, short sequential leaves and float-safe side overlap, `broad` the
 * same tree stopped early, with broad leaves scanned most-often-found region first, `boxtree`
 * an axis-aligned bounding-box tree, `grid` a uniform cell grid over the box (src/emit/grid.ts),
 * `sequential` every region in turn.
 */
export type SearchKind = 'tree' | 'capped' | 'broad' | 'boxtree' | 'grid' | 'sequential';
export const SEARCH_KINDS: readonly SearchKind[] = ['tree', 'capped', 'broad', 'boxtree', 'grid', 'sequential'];
/** A built locator: a hyperplane tree (tree, capped, broad), a box tree or a cell grid. */
export type Locator = SearchTree | BoxTree | GridIndex;

/** True for the structures whose descent compares a·θ with b (node_plane arrays). */
export function planeSearch(search: SearchKind): boolean {
  return search === 'tree' || search === 'capped' || search === 'broad';
}

/** Unit roundoff of IEEE single precision, 2⁻²⁴ (a machine constant, not a tolerance). */
export const FLOAT_U = 2 ** -24;

/** The smallest float ≥ x (x ≥ 0 finite): a slack that rounding may not shrink. */
export function roundUp(x: number): number {
  const f = Math.fround(x);
  return f >= x ? f : Math.fround(f + f * 2 ** -23 + Number.MIN_VALUE);
}

/**
 * Proven rounding bound of one float region test, fl(Σ fl(â_j θ̂_j)) ≤ fl(b + s), against the exact
 * a·θ ≤ b + s, with a, θ and b + s rounded to float and the sum taken from the first product:
 * (nθ + 2)·u·Σ_j |a_j|·M_j + u·|b|, M_j = max |θ_j| over the box (DEVELOPERS.md, "Point location in
 * float"; Higham, Accuracy and Stability of Numerical Algorithms, §3.1, γ_n bound — from memory).
 */
export function floatRowError(a: ArrayLike<number>, b: number, thetaMax: ArrayLike<number>): number {
  let s = 0;
  for (let j = 0; j < a.length; j++) s += Math.abs(a[j]) * thetaMax[j];
  return ((a.length + 2) * s + Math.abs(b)) * FLOAT_U;
}

/** max |θ_j| over the box, per coordinate. */
export function boxAbsMax(box: { lower: ArrayLike<number>; upper: ArrayLike<number> }): number[] {
  return Array.from(box.lower, (l, j) => Math.max(Math.abs(l), Math.abs(box.upper[j])));
}

/**
 * Region tests of a build, per region: the centre (float builds test a·(θ − c) ≤ b − a·c, c the
 * rounded Chebyshev centre, the same centre as the law; double builds test a·θ ≤ b, c = 0), the
 * bound b − a·c and every row's slack. In float the rounding bound then scales with the region's
 * own extent W_j = max |θ_j − c_j| over it (bounding box, plus 10⁻⁶ of the box width) instead of
 * |θ|max, so small regions — where the large gains live — overlap their neighbours by far less:
 * e = (nθ + 3)·u·Σ_j |a_j|·W_j + u·|b − a·c| (one more u·|a_j|W_j for the rounding of θ − c).
 */
export function regionTests(table: TableFile, precision: Precision): { centre: number[]; bound: number[]; slack: number[] }[] {
  const n = table.dims.ntheta;
  if (precision === 'double') return table.regions.map((r) => ({ centre: new Array<number>(n).fill(0), bound: [...r.b], slack: r.b.map(() => tol.inside) }));
  return table.regions.map((r) => {
    const c = r.chebyshev.center.map(Math.fround);
    const box = regionBounds(r, n);
    const w = c.map((cj, j) => Math.max(Math.abs(box[2 * j] - cj), Math.abs(box[2 * j + 1] - cj)) + 1e-6 * (table.box.upper[j] - table.box.lower[j]));
    const bound = r.A.map((a, i) => r.b[i] - a.reduce((acc, v, j) => acc + v * c[j], 0));
    const slack = r.A.map((a, i) => {
      let aw = 0;
      for (let j = 0; j < n; j++) aw += Math.abs(a[j]) * w[j];
      return 1.01 * (tol.inside + floatRowError(a, bound[i], w) + FLOAT_U * aw);
    });
    return { centre: c, bound, slack };
  });
}

/**
 * Slack of the float build of the plain tree (`tree` search): 4 units in the last place of the
 * largest ‖a‖₁·|θ|max + |b| times (nθ + 1), the blanket widening every float build used before
 * the proven per-row slack; kept for the tree, whose descent is not float-safe by itself.
 */
export function treeFloatSlack(table: TableFile): number {
  const m = boxAbsMax(table.box);
  const thetaMax = Math.max(...m);
  let scale = 0;
  for (const r of table.regions)
    r.A.forEach((row, i) => {
      scale = Math.max(scale, row.reduce((acc, v) => acc + Math.abs(v), 0) * thetaMax + Math.abs(r.b[i]));
    });
  return Math.max(tol.inside, 4 * 2 ** -23 * (table.dims.ntheta + 1) * scale);
}

/** Largest row slack of a build (tol.inside in double). */
export function regionSlack(table: TableFile, precision: Precision): number {
  let s: number = tol.inside;
  for (const t of regionTests(table, precision)) for (const v of t.slack) s = Math.max(s, v);
  return s;
}

/** The search structure's index arrays, shared by every build (tree ones empty for sequential search). */
export interface SearchIndex {
  nodeLeft: number[];
  nodeRight: number[];
  leafStart: number[];
  leafRegion: number[];
  regionRowStart: number[];
  root: number;
  /** loop bound of the tree descent: the worst depth */
  maxDepth: number;
  /**
   * grid, float builds: per cell 1 when every θ the generated code maps into the cell lies deep inside
   * the cell's first candidate (gridSureCells), so that region is the answer without a test; absent or
   * empty otherwise
   */
  leafSure?: number[];
}

/** The index arrays of a build: copied from the tree for tree search, empty (root −1, depth 0) otherwise. */
export function searchIndex(search: SearchKind, tree: Locator | null, regionRowStart: number[]): SearchIndex {
  if (search === 'sequential') return { nodeLeft: [], nodeRight: [], leafStart: [], leafRegion: [], regionRowStart, root: -1, maxDepth: 0 };
  if (!tree) throw new Error(`${search} search needs a search tree`);
  if (tree.format === 'tessera-grid') {
    if (search !== 'grid') throw new Error(`${search} search needs a tree, not a grid`);
    return { nodeLeft: [], nodeRight: [], leafStart: [...tree.leafStart], leafRegion: [...tree.leafRegions], regionRowStart, root: -1, maxDepth: 0 };
  }
  if (search === 'grid') throw new Error('grid search needs a grid');
  return {
    nodeLeft: [...tree.nodeLeft],
    nodeRight: [...tree.nodeRight],
    leafStart: [...tree.leafStart],
    leafRegion: [...tree.leafRegions],
    regionRowStart,
    root: tree.root,
    maxDepth: tree.stats.maxDepth,
  };
}

export interface EmitArrays extends SearchIndex {
  precision: Precision;
  search: SearchKind;
  ntheta: number;
  nu: number;
  regionCount: number;
  /**
   * largest slack of a region test (see regionTests). Double builds add it to the bound
   * (regionB = b + tol.inside); float builds keep regionB = round(b − a·c) without slack and
   * compare each residual with the region's own slack regionSlack[r]
   */
  slack: number;
  /**
   * real arrays, every entry already rounded to `precision`. nodePlane holds each tree node's own
   * hyperplane inline, nθ coefficients then b (stride nθ + 1), so that the descent's coefficient
   * loads depend only on the node reference (a shared hyperplane is stored once per node using it)
   */
  nodePlane: number[];
  regionA: number[];
  regionB: number[];
  lawF: number[];
  /**
   * law offsets. When lawC is not empty the law is evaluated around each region's centre c (its
   * Chebyshev centre, rounded): u = F(θ − c) + g', with lawG holding g' = g + F c (computed in
   * double, then rounded), which removes the cancellation of large F θ against g in float
   */
  lawG: number[];
  /** per region nθ centre coordinates (empty: plain law u = F θ + g) */
  lawC: number[];
  /**
   * float builds: per region the slack of its test, the largest of its rows' proven slacks (rounded
   * up to a float); a row holds when fl(a·(θ − c) − b) ≤ regionSlack[r]. Keeping the slack out of
   * regionB makes the best-fit residual slack-free, so regions are ranked by how far θ really lies
   * beyond their facets, not by how wide their slack is. Empty in double builds.
   */
  regionSlack: number[];
  /**
   * best-fit location (float builds): every candidate is tested in full and, among those that hold θ
   * within their slack, the one with the smallest largest slack-free residual max_i (a_i·(θ − c) − b_i)
   * wins, ties to the lowest index. A θ is then placed in the overlap's other region only when it
   * lies within the rounding of the residuals of its own region's boundary, instead of whenever a
   * neighbour's slack reaches it.
   * Double builds keep first-fit (the lowest index), exactly sequential search.
   */
  bestFit: boolean;
  /**
   * best fit's early exit (float builds; 0 in double): a candidate whose largest slack-free residual
   * is ≤ this (negative) number is deep inside its region, and no other region can fit better, so the
   * scan stops there with the same answer as the full scan. Proof: the residuals are within ε_X < S_X
   * of the exact ones (regionTests), the table's regions overlap by at most tol.inside, so a θ at
   * depth > tol.inside + ε_R inside R has ρ_N ≥ −tol.inside in every other region N and
   * ρ̂_N ≥ −tol.inside − ε_N > −S_N ≥ −max S; the threshold is −2·max S (rounded to a float, toward 0
   * never: −roundUp(2·max S)), so ρ̂_R ≤ it < ρ̂_N strictly.
   */
  fitSure: number;
  /**
   * levels of the descent's head (planeHeadLevels; 0 without one): the generated float/double C of
   * `capped` and `broad` sums the planes of the tree's top headLevels levels together, from fixed
   * addresses, before its loop (headArrays); the leaf reached is the one-level descent's
   */
  headLevels: number;
  /** box tree: per node the compared coordinate and the split value (θ[axis] ≤ split goes left) */
  nodeAxis: number[];
  nodeSplit: number[];
  /**
   * grid: cells per coordinate, origin and cells per unit (floats); θ's cell per coordinate is
   * trunc(fl(fl(θ_j − lo_j)·s_j)), below 0 (or NaN) the first, at or above the count the last;
   * cell index row-major (the last coordinate fastest), leaf k = cell k
   */
  gridCells: number[];
  gridLower: number[];
  gridScale: number[];
  /**
   * `emit --clamp`: u saturated to the table's input limits after the law (bounds rounded to the
   * build's precision; null = that side open); null when the build does not clamp
   */
  clamp: { lower: (number | null)[]; upper: (number | null)[] } | null;
}

/**
 * Law form of a build: float builds evaluate each law around its region's centre (less
 * cancellation), double builds keep u = F θ + g, bit for bit the table's own law.
 */
export function centredLaw(precision: Precision): boolean {
  return precision === 'float';
}

/**
 * Flatten a table (and its point-location structure, for tree-like searches) into the arrays the generated code
 * holds: real arrays already rounded to `precision`, index arrays, region bounds widened by the
 * precision's slack. θ and u in the table's units. Returns new arrays owned by the caller.
 * With `clamp`, u is saturated to the table's input limits as the generated code does.
 * `orderPoints` overrides the number of points that order the candidates (orderCandidates; broad's
 * trial builds pass fewer, a build that is printed keeps the default).
 */
export function buildArrays(table: TableFile, precision: Precision, search: SearchKind, tree: Locator | null, clamp = false, orderPoints?: number): EmitArrays {
  const round = precision === 'float' ? Math.fround : (x: number) => x;
  const bound = (v: number | null | undefined) => (v === null || v === undefined ? null : round(v));
  const n = table.dims.ntheta;
  if (!(n >= 1)) throw new Error('the generated code needs at least one parameter');
  const tests = regionTests(table, precision);
  if (precision === 'float' && search === 'tree') {
    // the plain tree's descent has no float side overlap: a θ sent across a node plane by rounding is
    // caught only by the neighbour in the other leaf, so this build keeps the wide slack it always had
    const wide = treeFloatSlack(table);
    for (const t of tests) t.slack = t.slack.map((v) => Math.max(v, wide));
  }
  let slack: number = tol.inside;
  for (const t of tests) for (const v of t.slack) slack = Math.max(slack, v);
  const regionA: number[] = [];
  const regionB: number[] = [];
  const regionRowStart = [0];
  const lawF: number[] = [];
  const lawG: number[] = [];
  const lawC: number[] = [];
  const regionSlack: number[] = [];
  const centred = centredLaw(precision);
  table.regions.forEach((r, k) => {
    const t = tests[k];
    if (centred) {
      // the region's slack, rounded up to a float: fl is monotone, so fl(a·(θ − c) − b) ≤ fl(σ_i) ≤ this
      // whenever the exact row test passes with its own slack σ_i (regionTests)
      regionSlack.push(roundUp(Math.max(...t.slack)));
      slack = Math.max(slack, regionSlack[k]);
    }
    r.A.forEach((row, i) => {
      for (let j = 0; j < n; j++) regionA.push(round(row[j]));
      regionB.push(round(centred ? t.bound[i] : t.bound[i] + t.slack[i]));
    });
    regionRowStart.push(regionB.length);
    const c = r.chebyshev.center.map(round);
    if (centred) lawC.push(...c);
    r.law.F.forEach((row, i) => {
      for (let j = 0; j < n; j++) lawF.push(round(row[j]));
      let g = r.law.g[i];
      if (centred) for (let j = 0; j < n; j++) g += row[j] * c[j];
      lawG.push(round(g));
    });
  });
  if (centred !== (precision === 'float')) throw new Error('the centred region test and law go together (float builds)');
  const out: EmitArrays = {
    precision,
    search,
    ntheta: n,
    nu: table.dims.nu,
    regionCount: table.regions.length,
    slack,
    nodePlane: [],
    regionA,
    regionB,
    lawF,
    lawG,
    lawC,
    regionSlack,
    bestFit: precision === 'float',
    fitSure: precision === 'float' ? -roundUp(2 * slack) : 0,
    headLevels: 0,
    nodeAxis: [],
    nodeSplit: [],
    gridCells: [],
    gridLower: [],
    gridScale: [],
    ...searchIndex(search, tree, regionRowStart),
    clamp: clamp
      ? { lower: table.inputNames.map((_, i) => bound(table.inputLimits?.lower?.[i])), upper: table.inputNames.map((_, i) => bound(table.inputLimits?.upper?.[i])) }
      : null,
  };
  if (search === 'sequential' || !tree) return out;
  if (tree.regionCount !== table.regions.length || tree.ntheta !== n) throw new Error('search tree does not match the table');
  if (tree.format === 'tessera-grid') {
    out.gridCells = [...tree.cells];
    out.gridLower = tree.lower.map(round);
    out.gridScale = tree.scale.map(round);
    if (out.gridLower.some((v, j) => v !== tree.lower[j]) || out.gridScale.some((v, j) => v !== tree.scale[j])) throw new Error('grid origin and scale must be floats');
  } else if (search === 'boxtree') {
    if (tree.format !== 'tessera-box-tree') throw new Error('box-tree search needs a box tree');
    out.nodeAxis = [...tree.nodeAxis];
    out.nodeSplit = tree.nodeSplit.map(round); // floats already: exact in both precisions
    if (out.nodeSplit.some((v, k) => v !== tree.nodeSplit[k])) throw new Error('box-tree split values must be floats');
  } else {
    if (tree.format === 'tessera-box-tree') throw new Error(`${search} search needs a hyperplane tree`);
    for (const k of tree.nodeHyperplane) {
      for (let j = 0; j < n; j++) out.nodePlane.push(round(tree.hyperplanes.a[k][j]));
      out.nodePlane.push(round(tree.hyperplanes.b[k]));
    }
    if (search === 'capped' || search === 'broad') out.headLevels = planeHeadLevels(n, out.maxDepth);
  }
  orderCandidates(out, table.box, orderPoints);
  // a float grid's cells that lie deep inside their first candidate (after the ordering: the region
  // most often found there) skip the region test
  if (tree.format === 'tessera-grid' && out.bestFit) out.leafSure = gridSureCells(table, out, tree);
  return out;
}

export interface ArrayEvaluation {
  region: number;
  u: number[] | null;
}

/** Evaluate the build at θ exactly as the generated C does (θ is rounded to the build's precision first). */
export function evaluateArrays(ar: EmitArrays, thetaIn: ArrayLike<number>): ArrayEvaluation {
  const n = ar.ntheta;
  const f = ar.precision === 'float';
  const theta = f ? Array.from(thetaIn, Math.fround) : thetaIn;
  // a·θ summed from the first product (nθ ≥ 1), as the C does; against a sum seeded with 0 it can
  // differ only in the sign of a zero result, which no comparison sees (IEEE 754: −0 == +0)
  const dot = (a: number[], at: number): number => {
    let s = f ? Math.fround(a[at] * theta[0]) : a[at] * theta[0];
    if (f) for (let j = 1; j < n; j++) s = Math.fround(s + Math.fround(a[at + j] * theta[j]));
    else for (let j = 1; j < n; j++) s += a[at + j] * theta[j];
    return s;
  };
  const inside = (r: number): boolean => {
    for (let i = ar.regionRowStart[r]; i < ar.regionRowStart[r + 1]; i++) {
      if (!(dot(ar.regionA, i * n) <= ar.regionB[i])) return false; // written so that NaN fails the test
    }
    return true;
  };
  // best fit: largest slack-free residual a·(θ − c) − b of the region's rows, NaN when a row exceeds the region's slack
  const t = new Array<number>(n);
  const fit = (r: number): number => {
    let worst = NaN;
    const sl = ar.regionSlack[r];
    for (let j = 0; j < n; j++) t[j] = f ? Math.fround(theta[j] - ar.lawC[r * n + j]) : theta[j] - ar.lawC[r * n + j];
    for (let i = ar.regionRowStart[r]; i < ar.regionRowStart[r + 1]; i++) {
      let s = f ? Math.fround(ar.regionA[i * n] * t[0]) : ar.regionA[i * n] * t[0];
      if (f) for (let j = 1; j < n; j++) s = Math.fround(s + Math.fround(ar.regionA[i * n + j] * t[j]));
      else for (let j = 1; j < n; j++) s += ar.regionA[i * n + j] * t[j];
      const d = f ? Math.fround(s - ar.regionB[i]) : s - ar.regionB[i];
      if (!(d <= sl)) return NaN;
      if (i === ar.regionRowStart[r] || d > worst) worst = d;
    }
    return worst;
  };
  const scan = (count: number, regionAt: (k: number) => number): ArrayEvaluation => {
    if (!ar.bestFit) {
      // first fit (double builds; a float build forced to first fit, as the tests do, tests around the centre)
      const holds = ar.lawC.length > 0 ? (r: number) => !Number.isNaN(fit(r)) : inside;
      for (let k = 0; k < count; k++) if (holds(regionAt(k))) return { region: regionAt(k), u: law(regionAt(k)) };
      return { region: -1, u: null };
    }
    let best = -1;
    let bestRes = 0;
    for (let k = 0; k < count; k++) {
      const q = fit(regionAt(k));
      // ties to the lowest region index, whatever the order of the candidates
      if (q === q && (best < 0 || q < bestRes || (q === bestRes && regionAt(k) < best))) {
        best = regionAt(k);
        bestRes = q;
        if (q <= ar.fitSure) break; // deep inside: no other candidate can fit better
      }
    }
    return best < 0 ? { region: -1, u: null } : { region: best, u: law(best) };
  };
  const law = (r: number): number[] => {
    const u = new Array<number>(ar.nu);
    for (let i = 0; i < ar.nu; i++) {
      const row = r * ar.nu + i;
      let s = ar.lawG[row];
      if (ar.lawC.length > 0) {
        // around the centre: d = θ − c first (one rounding), then F d
        const c = r * n;
        if (f) for (let j = 0; j < n; j++) s = Math.fround(s + Math.fround(ar.lawF[row * n + j] * Math.fround(theta[j] - ar.lawC[c + j])));
        else for (let j = 0; j < n; j++) s += ar.lawF[row * n + j] * (theta[j] - ar.lawC[c + j]);
      } else if (f) for (let j = 0; j < n; j++) s = Math.fround(s + Math.fround(ar.lawF[row * n + j] * theta[j]));
      else for (let j = 0; j < n; j++) s += ar.lawF[row * n + j] * theta[j];
      const lo = ar.clamp?.lower[i];
      const hi = ar.clamp?.upper[i];
      if (lo !== null && lo !== undefined && s < lo) s = lo;
      if (hi !== null && hi !== undefined && s > hi) s = hi;
      u[i] = s;
    }
    return u;
  };
  if (ar.search === 'sequential') return scan(ar.regionCount, (k) => k);
  const leaf = descend(ar, theta, dot);
  if (leaf < 0) return { region: -1, u: null };
  // a grid cell deep inside its first candidate: that region without a test (gridSureCells)
  if (ar.leafSure?.[leaf]) return { region: ar.leafRegion[ar.leafStart[leaf]], u: law(ar.leafRegion[ar.leafStart[leaf]]) };
  return scan(ar.leafStart[leaf + 1] - ar.leafStart[leaf], (k) => ar.leafRegion[ar.leafStart[leaf] + k]);
}

/** The leaf the generated code's descent reaches for θ (already rounded to the build's precision), or −1 past the depth bound. */
function descend(ar: EmitArrays, theta: ArrayLike<number>, dot: (a: number[], at: number) => number): number {
  const n = ar.ntheta;
  if (ar.search === 'grid') return gridCell({ cells: ar.gridCells, lower: ar.gridLower, scale: ar.gridScale }, theta, ar.precision === 'float');
  let ref = ar.root;
  if (ar.search === 'boxtree')
    for (let d = 0; d < ar.maxDepth && ref >= 0; d++) ref = theta[ar.nodeAxis[ref]] <= ar.nodeSplit[ref] ? ar.nodeLeft[ref] : ar.nodeRight[ref];
  else
    for (let d = 0; d < ar.maxDepth && ref >= 0; d++) {
      const at = ref * (n + 1);
      ref = dot(ar.nodePlane, at) <= ar.nodePlane[at + n] ? ar.nodeLeft[ref] : ar.nodeRight[ref];
    }
  return ref >= 0 ? -1 : -ref - 1;
}

/** Seed of the points that order each leaf's candidates (not the seed of any test or bench sample). */
export const ORDER_SEED = 4099;

/**
 * Points that order the candidates: ORDER_POINTS_PER_LEAF per leaf, at least ORDER_POINTS_MIN and at
 * most ORDER_POINTS_MAX. Until s23 it was 4 per leaf within [20 000, 60 000]: ~100 points per leaf
 * on the locate bench's 5-D and 6-D broad trees, whose leaves list 25–32 candidates, so the order
 * past the first few rested on a handful of hits. Candidates tested per lookup on 18 000 points of
 * another seed, ordered on 20 000 / 100 000 / 200 000 points: 5-D broad 2.52 / 2.39 / 2.37, 6-D broad
 * 2.93 / 2.65 / 2.62, 4-D capped 1.65 / 1.59 / 1.58. Ordering costs ~8 µs per point in 6-D (JS),
 * so the cap keeps it near 1 s per build.
 */
export const ORDER_POINTS_PER_LEAF = 500;
export const ORDER_POINTS_MIN = 20000;
export const ORDER_POINTS_MAX = 100000;

/**
 * Best-fit builds of a tree-like search: each leaf's candidates reordered so that the region found
 * most often in that leaf on seeded points of the box comes first (then by region index). The answer
 * does not change — best fit takes the smallest residual with ties to the lowest index, and its early
 * exit fires only for the unique best region — but the scan usually meets the region holding θ first
 * and stops there instead of testing the candidates before it. Returns the number of points used.
 */
export function orderCandidates(ar: EmitArrays, box: { lower: ArrayLike<number>; upper: ArrayLike<number> }, points?: number): number {
  if (!ar.bestFit || ar.search === 'sequential' || ar.leafStart.length < 2) return 0;
  const leaves = ar.leafStart.length - 1;
  const count = points ?? Math.min(ORDER_POINTS_MAX, Math.max(ORDER_POINTS_MIN, ORDER_POINTS_PER_LEAF * leaves));
  const hits = new Map<number, number>(); // key leaf·R + region
  const R = ar.regionCount;
  const n = ar.ntheta;
  const f = ar.precision === 'float';
  const rnd = seededRandom(ORDER_SEED);
  const theta = new Array<number>(n);
  const dot = (a: number[], at: number): number => {
    let s = f ? Math.fround(a[at] * theta[0]) : a[at] * theta[0];
    if (f) for (let j = 1; j < n; j++) s = Math.fround(s + Math.fround(a[at + j] * theta[j]));
    else for (let j = 1; j < n; j++) s += a[at + j] * theta[j];
    return s;
  };
  for (let i = 0; i < count; i++) {
    for (let j = 0; j < n; j++) theta[j] = box.lower[j] + (box.upper[j] - box.lower[j]) * rnd();
    if (f) for (let j = 0; j < n; j++) theta[j] = Math.fround(theta[j]);
    const leaf = descend(ar, theta, dot);
    if (leaf < 0) continue;
    const r = evaluateArrays(ar, theta).region;
    if (r >= 0) hits.set(leaf * R + r, (hits.get(leaf * R + r) ?? 0) + 1);
  }
  for (let leaf = 0; leaf < leaves; leaf++) {
    const from = ar.leafStart[leaf];
    const list = ar.leafRegion.slice(from, ar.leafStart[leaf + 1]);
    list.sort((a, b) => (hits.get(leaf * R + b) ?? 0) - (hits.get(leaf * R + a) ?? 0) || a - b);
    for (let k = 0; k < list.length; k++) ar.leafRegion[from + k] = list[k];
  }
  return count;
}

/** Operation counts of one evaluation (language-neutral; each target adds its own memory report). */
export interface CostFigures {
  search: SearchKind;
  regions: number;
  /** worst-case hyperplane tests on the way to a leaf (0 for sequential search) */
  worstDepth: number;
  /** worst case over every path: multiply-adds and comparisons of one evaluation (with --clamp, its comparisons included) */
  worstMultiplyAdds: number;
  worstComparisons: number;
  /** comparisons of the --clamp saturation (0 without it), part of worstComparisons */
  clampComparisons: number;
}

/** Levels of a hyperplane tree's descent the generated float/double C takes per pass of its loop. */
export const PLANE_DESCENT_LEVELS = 2;

/**
 * Plane tests the generated descent of a hyperplane tree makes on a path of `depth` nodes: it takes
 * L = PLANE_DESCENT_LEVELS levels per pass and sums the planes of the node and of its descendants
 * L − 1 levels down in every pass (the slots of leaves on the way too), so (2^L − 1)·⌈depth/L⌉
 * planes of nθ multiply-adds and one comparison each.
 */
export function planeDescentTests(depth: number, levels = PLANE_DESCENT_LEVELS): number {
  return (2 ** levels - 1) * Math.ceil(depth / levels);
}

/**
 * Multiply-adds the head of a plane descent may take (planeHeadLevels). The head's planes are stored
 * at fixed addresses, so their loads and sums wait on nothing and run side by side (the compiler
 * packs them into vector operations where it can) while the loop's passes each wait for a chain of
 * loads and sums. Measured on the locate bench's tables (float C, gcc -O2, per-point medians, 21–41
 * alternations in one shell, load 5–9, 2026-12-03): 5-D broad 205 → 199 (4 levels) → 183 ns (5
 * levels; 6 levels: slower than none), 6-D broad 279 → 260 (4) / 262 (5) ns, 4-D capped 188 → 178
 * (4) / 182 (5) ns, 3-D capped 157 → 148 (4) / 145 (5) ns; the same region and bits everywhere.
 */
export const PLANE_HEAD_MACS = 160;

/**
 * Levels of the head of a `capped`/`broad` descent in the generated float/double C: the most, at
 * least 2 and at most the tree's depth − 1, whose 2^H planes (headArrays) take at most
 * PLANE_HEAD_MACS multiply-adds (5 levels up to nθ = 5, 4 up to nθ = 10, 3 up to 20, then 2); 0 for
 * a tree of depth < 3. Below the depth so that the loop stays and reads the node arrays (a head
 * covering the whole tree left them unread: gcc -Wunused-const-variable on a 5-D tree of depth 5).
 * The plain tree keeps the loop alone (the cross-build count bounds its loop by depth).
 */
export function planeHeadLevels(ntheta: number, maxDepth: number): number {
  let h = 0;
  while (h + 1 <= maxDepth - 1 && 2 ** (h + 1) * ntheta <= PLANE_HEAD_MACS) h++;
  return h >= 2 ? h : maxDepth - 1 >= 2 ? 2 : 0;
}

/**
 * The head of a plane descent (headLevels H > 0): the 2^H − 1 nodes of the tree's top H levels in
 * heap order (slot k's children are 2k + 1 left and 2k + 2 right) and one unused slot (a zero plane)
 * that makes 2^H, their planes column by column (`plane[j·W + k]`, W = 2^H, the coefficients j < nθ,
 * then b at j = nθ), and the 2^H references reached below them (`ref`, a node at depth H or a leaf).
 * W slots, not 2^H − 1: gcc -O2 turns the sums of a whole number of 4-lane blocks into vector
 * operations and leaves 31 scalar (5-D broad on the locate bench: 31 slots 190 ns, 32 slots 158 ns,
 * no head 175 ns, alternated, load ≈ 6). A leaf above depth H fills its slots: a zero plane, and both
 * sides reach the leaf again, so whatever its comparison says the walk ends at that leaf. The
 * generated code sums all W planes, then walks H comparisons by slot index: the sums and comparisons
 * that decide the path are the one-level descent's (same coefficients, same order), so it reaches
 * the same node or leaf.
 */
export function headArrays(ar: Pick<EmitArrays, 'headLevels' | 'ntheta' | 'root' | 'nodeLeft' | 'nodeRight' | 'nodePlane'>): { plane: number[]; ref: number[] } {
  const H = ar.headLevels;
  const n = ar.ntheta;
  if (!(H > 0)) return { plane: [], ref: [] };
  const K = 2 ** H - 1;
  const slot: number[] = new Array(K).fill(-1);
  const ref: number[] = new Array(K + 1).fill(0);
  const fill = (k: number, r: number, depth: number): void => {
    if (depth === H) {
      ref[k - K] = r;
      return;
    }
    slot[k] = r;
    fill(2 * k + 1, r >= 0 ? ar.nodeLeft[r] : r, depth + 1);
    fill(2 * k + 2, r >= 0 ? ar.nodeRight[r] : r, depth + 1);
  };
  fill(0, ar.root, 0);
  const plane: number[] = [];
  for (let j = 0; j <= n; j++) for (let k = 0; k <= K; k++) plane.push(k < K && slot[k] >= 0 ? ar.nodePlane[slot[k] * (n + 1) + j] : 0);
  return { plane, ref };
}

/**
 * Planes summed and comparisons made by the generated float/double descent of a hyperplane tree on
 * a path of `depth` nodes: the head's 2^H sums (its unused slot included) and H comparisons (H =
 * `head`, planeHeadLevels), then PLANE_DESCENT_LEVELS levels per pass of the loop
 * (planeDescentTests) for the depth below it.
 */
export function planeDescentCounts(depth: number, head: number): { planes: number; comparisons: number } {
  if (!(head > 0)) return { planes: planeDescentTests(depth), comparisons: planeDescentTests(depth) };
  const rest = planeDescentTests(Math.max(0, depth - head));
  return { planes: 2 ** head + rest, comparisons: head + rest };
}

/** Passes of the generated plane descent on a path of `depth` nodes: the head counts as one. */
export function planeDescentPasses(depth: number, head: number): number {
  return head > 0 ? 1 + Math.ceil(Math.max(0, depth - head) / PLANE_DESCENT_LEVELS) : Math.ceil(depth / PLANE_DESCENT_LEVELS);
}

/**
 * Worst-case cost of one evaluation, the maximum over every leaf of its path: the descent (per
 * plane tested nθ multiply-adds and one comparison for a hyperplane tree, planeDescentTests, one comparison and no
 * multiplication for the box tree; for the grid the cell, nθ multiply-adds and 2·nθ comparisons), then every candidate region's rows tested in full, then the
 * law (nu·nθ multiply-adds; a centred law adds nθ subtractions per row, not counted as multiply-adds).
 */
export function costFigures(
  ar: Pick<EmitArrays, 'search' | 'ntheta' | 'nu' | 'regionCount' | 'regionRowStart' | 'root' | 'nodeLeft' | 'nodeRight' | 'leafStart' | 'leafRegion'> &
    Partial<Pick<EmitArrays, 'bestFit' | 'leafSure' | 'headLevels'>> & { clamp?: EmitArrays['clamp'] },
  /** the plane descent of the printer: two levels per pass (float/double C, planeDescentTests) or one plane per level (fixed point) */
  planeDescent: 'paired' | 'single' = 'paired',
): CostFigures {
  // best fit: per row the test and the running maximum, per region the comparison with the best so
  // far and the early-exit test (made when the region becomes the best: at most once per region)
  const rowCmp = ar.bestFit ? 2 : 1;
  const regionCmp = ar.bestFit ? 2 : 0;
  const n = ar.ntheta;
  const rows = (r: number) => ar.regionRowStart[r + 1] - ar.regionRowStart[r];
  const lawMacs = ar.nu * n;
  // the saturation of --clamp: one comparison per finite input limit
  const clampCmp = ar.clamp ? clampComparisons(ar.clamp, ar.nu) : 0;
  let worstDepth = 0;
  let worstMacs = 0;
  let worstCmp = 0;
  if (ar.search === 'sequential') {
    let all = 0;
    for (let r = 0; r < ar.regionCount; r++) all += rows(r);
    worstMacs = all * n + lawMacs;
    worstCmp = all * rowCmp + ar.regionCount * regionCmp + clampCmp;
  } else if (ar.search === 'grid') {
    // the cell: per coordinate one subtraction and one multiplication (counted as a multiply-add) and
    // two comparisons; then every candidate of the cell in full
    for (let leaf = 0; leaf + 1 < ar.leafStart.length; leaf++) {
      if (ar.leafSure?.[leaf]) {
        // a cell deep inside its first candidate: the cell and the law, no region test
        worstMacs = Math.max(worstMacs, n + lawMacs);
        worstCmp = Math.max(worstCmp, 2 * n + clampCmp);
        continue;
      }
      let rr = 0;
      for (let k = ar.leafStart[leaf]; k < ar.leafStart[leaf + 1]; k++) rr += rows(ar.leafRegion[k]);
      worstMacs = Math.max(worstMacs, n + rr * n + lawMacs);
      worstCmp = Math.max(worstCmp, 2 * n + rr * rowCmp + (ar.leafStart[leaf + 1] - ar.leafStart[leaf]) * regionCmp + clampCmp);
    }
  } else {
    const depths = leafDepths({ root: ar.root, nodeLeft: ar.nodeLeft, nodeRight: ar.nodeRight, leafStart: ar.leafStart });
    depths.forEach((d, leaf) => {
      let rr = 0;
      for (let k = ar.leafStart[leaf]; k < ar.leafStart[leaf + 1]; k++) rr += rows(ar.leafRegion[k]);
      worstDepth = Math.max(worstDepth, d);
      // a plane descent: the head's planes (planeHeadLevels), then two levels per pass summing three
      // planes in each (planeDescentCounts)
      const plain = ar.search === 'boxtree' || planeDescent === 'single';
      const counts = plain ? { planes: d, comparisons: d } : planeDescentCounts(d, ar.headLevels ?? 0);
      worstMacs = Math.max(worstMacs, (ar.search === 'boxtree' ? 0 : counts.planes * n) + rr * n + lawMacs);
      worstCmp = Math.max(worstCmp, counts.comparisons + rr * rowCmp + (ar.leafStart[leaf + 1] - ar.leafStart[leaf]) * regionCmp + clampCmp);
    });
  }
  return { search: ar.search, regions: ar.regionCount, worstDepth, worstMultiplyAdds: worstMacs, worstComparisons: worstCmp, clampComparisons: clampCmp };
}

/**
 * What one evaluation does on average over seeded points of the box (meanProfile), following the
 * generated code's path exactly: `operations` multiply-adds plus comparisons as costFigures counts
 * them; `passes` passes of the descent loop (a hyperplane tree takes PLANE_DESCENT_LEVELS levels per
 * pass, the box tree one, the grid's cell counts as one); `levels` tree levels; `candidates` regions
 * tested; `rows` region rows tested (each up to its first failing row); `found` the share of points
 * located (the law evaluated).
 */
export interface MeanProfile {
  operations: number;
  passes: number;
  levels: number;
  candidates: number;
  rows: number;
  found: number;
}

/**
 * Mean operations (multiply-adds plus comparisons, counted as costFigures counts them) of one
 * evaluation over `count` seeded points of the box, following the generated code's path exactly:
 * the descent or the cell, then the leaf's candidates in order, each up to its first failing row,
 * the early exit of best fit, and the law. The cost model's measure of the typical case (the worst
 * case is costFigures).
 */
export function meanOperations(ar: EmitArrays, box: { lower: ArrayLike<number>; upper: ArrayLike<number> }, count = 4000): number {
  return meanProfile(ar, box, count).operations;
}

/**
 * meanOperations with the counts it is made of (MeanProfile), the inputs of the latency model
 * (meanLatency in choose.ts); `points` replaces the seeded points of the box (rounded to the build's
 * precision as the generated code receives them).
 */
export function meanProfile(ar: EmitArrays, box: { lower: ArrayLike<number>; upper: ArrayLike<number> }, count = 4000, points?: readonly (readonly number[])[]): MeanProfile {
  if (points) count = points.length;
  const n = ar.ntheta;
  const f = ar.precision === 'float';
  const rowCmp = ar.bestFit ? 2 : 1;
  const rnd = seededRandom(ORDER_SEED + 1);
  const theta = new Array<number>(n);
  const t = new Array<number>(n);
  const dot = (a: number[], at: number, x: number[]): number => {
    let s = f ? Math.fround(a[at] * x[0]) : a[at] * x[0];
    if (f) for (let j = 1; j < n; j++) s = Math.fround(s + Math.fround(a[at + j] * x[j]));
    else for (let j = 1; j < n; j++) s += a[at + j] * x[j];
    return s;
  };
  let total = 0;
  let passes = 0;
  let levels = 0;
  let candidates = 0;
  let rowsTested = 0;
  let located = 0;
  for (let p = 0; p < count; p++) {
    for (let j = 0; j < n; j++) theta[j] = points ? points[p][j] : box.lower[j] + (box.upper[j] - box.lower[j]) * rnd();
    if (f) for (let j = 0; j < n; j++) theta[j] = Math.fround(theta[j]);
    let ops = 0;
    let from = 0;
    let to = ar.regionCount;
    let at = (k: number) => k;
    if (ar.search !== 'sequential') {
      if (ar.search === 'grid') {
        ops += 3 * n;
        passes++;
      } else {
        let ref = ar.root;
        let d = 0;
        for (; d < ar.maxDepth && ref >= 0; d++) {
          if (ar.search === 'boxtree') ops++;
          if (ar.search === 'boxtree') ref = theta[ar.nodeAxis[ref]] <= ar.nodeSplit[ref] ? ar.nodeLeft[ref] : ar.nodeRight[ref];
          else ref = dot(ar.nodePlane, ref * (n + 1), theta) <= ar.nodePlane[ref * (n + 1) + n] ? ar.nodeLeft[ref] : ar.nodeRight[ref];
        }
        if (ar.search !== 'boxtree') {
          const c = planeDescentCounts(d, ar.headLevels);
          ops += c.planes * n + c.comparisons;
        }
        levels += d;
        passes += ar.search === 'boxtree' ? d : planeDescentPasses(d, ar.headLevels);
      }
      const leaf = descend(ar, theta, (a, i) => dot(a, i, theta));
      if (leaf < 0) {
        total += ops;
        continue;
      }
      if (ar.leafSure?.[leaf]) {
        // the cell lies deep inside its first candidate: the law only
        total += ops + ar.nu * n;
        located++;
        continue;
      }
      from = ar.leafStart[leaf];
      to = ar.leafStart[leaf + 1];
      at = (k: number) => ar.leafRegion[k];
    }
    let found = false;
    for (let k = from; k < to; k++) {
      const r = at(k);
      candidates++;
      const c = ar.lawC.length > 0;
      for (let j = 0; j < n; j++) t[j] = c ? (f ? Math.fround(theta[j] - ar.lawC[r * n + j]) : theta[j] - ar.lawC[r * n + j]) : theta[j];
      let ok = true;
      let worst = 0;
      for (let i = ar.regionRowStart[r]; i < ar.regionRowStart[r + 1]; i++) {
        ops += n + rowCmp;
        rowsTested++;
        const s = dot(ar.regionA, i * n, t);
        const d = ar.bestFit ? (f ? Math.fround(s - ar.regionB[i]) : s - ar.regionB[i]) : s;
        const holds = ar.bestFit ? d <= ar.regionSlack[r] : d <= ar.regionB[i];
        if (!holds) {
          ok = false;
          break;
        }
        if (i === ar.regionRowStart[r] || d > worst) worst = d;
      }
      if (!ok) continue;
      found = true;
      if (!ar.bestFit) break;
      ops += 2;
      if (worst <= ar.fitSure) break;
    }
    if (found) {
      ops += ar.nu * n;
      located++;
    }
    total += ops;
  }
  return { operations: total / count, passes: passes / count, levels: levels / count, candidates: candidates / count, rows: rowsTested / count, found: located / count };
}
