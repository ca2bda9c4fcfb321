/**
 * The flat arrays behind the generated code, built once from a table (and its search tree), with an
 * evaluator that repeats the generated C's arithmetic exactly: in double it is the C double build;
 * in float every product and sum is rounded with Math.fround, which is exact IEEE single precision
 * (a product of two floats is exact in double, and a double-rounded float sum is correctly rounded).
 */
import { tol } from '../tol.js';
import type { TableFile } from '../table/format.js';
import { leafDepths, type SearchTree } from '../partition/tree.js';
import { clampComparisons } from '../table/clamp.js';

export type Precision = 'float' | 'double';
export type SearchKind = 'tree' | 'sequential';

/**
 * The region test in float cannot resolve tol.inside (1e-8 is below single-precision resolution of
 * θ of order 1), so the float build widens it to this many units in the last place of the data scale.
 */
export const FLOAT_SLACK_ULPS = 4;
const FLOAT_EPS = 2 ** -23; // machine constant of IEEE single precision, not a tolerance

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
}

/** The index arrays of a build: copied from the tree for tree search, empty (root −1, depth 0) otherwise. */
export function searchIndex(search: SearchKind, tree: SearchTree | null, regionRowStart: number[]): SearchIndex {
  if (search !== 'tree') return { nodeLeft: [], nodeRight: [], leafStart: [], leafRegion: [], regionRowStart, root: -1, maxDepth: 0 };
  if (!tree) throw new Error('tree search needs a search tree');
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
  /** slack added to every region bound before rounding (regionB = round(b + slack)) */
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
  lawG: number[];
  /**
   * `emit --clamp`: u saturated to the table's input limits after the law (bounds rounded to the
   * build's precision; null = that side open); null when the build does not clamp
   */
  clamp: { lower: (number | null)[]; upper: (number | null)[] } | null;
}

/** Region-test slack of a build: tol.inside in double; in float, a few ulps of the largest |θ|·‖a‖₁ + |b|. */
export function regionSlack(table: TableFile, precision: Precision): number {
  if (precision === 'double') return tol.inside;
  let thetaMax = 0;
  for (let j = 0; j < table.dims.ntheta; j++) thetaMax = Math.max(thetaMax, Math.abs(table.box.lower[j]), Math.abs(table.box.upper[j]));
  let scale = 0;
  for (const r of table.regions)
    r.A.forEach((row, i) => {
      const l1 = row.reduce((s, v) => s + Math.abs(v), 0);
      scale = Math.max(scale, l1 * thetaMax + Math.abs(r.b[i]));
    });
  return Math.max(tol.inside, FLOAT_SLACK_ULPS * FLOAT_EPS * (table.dims.ntheta + 1) * scale);
}

/**
 * Flatten a table (and its search tree, for `search: 'tree'`) into the arrays the generated code
 * holds: real arrays already rounded to `precision`, index arrays, region bounds widened by the
 * precision's slack. θ and u in the table's units. Returns new arrays owned by the caller.
 * With `clamp`, u is saturated to the table's input limits as the generated code does.
 */
export function buildArrays(table: TableFile, precision: Precision, search: SearchKind, tree: SearchTree | null, clamp = false): EmitArrays {
  const round = precision === 'float' ? Math.fround : (x: number) => x;
  const bound = (v: number | null | undefined) => (v === null || v === undefined ? null : round(v));
  const n = table.dims.ntheta;
  if (!(n >= 1)) throw new Error('the generated code needs at least one parameter');
  const slack = regionSlack(table, precision);
  const regionA: number[] = [];
  const regionB: number[] = [];
  const regionRowStart = [0];
  const lawF: number[] = [];
  const lawG: number[] = [];
  for (const r of table.regions) {
    r.A.forEach((row, i) => {
      for (let j = 0; j < n; j++) regionA.push(round(row[j]));
      regionB.push(round(r.b[i] + slack));
    });
    regionRowStart.push(regionB.length);
    r.law.F.forEach((row, i) => {
      for (let j = 0; j < n; j++) lawF.push(round(row[j]));
      lawG.push(round(r.law.g[i]));
    });
  }
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
    ...searchIndex(search, tree, regionRowStart),
    clamp: clamp
      ? { lower: table.inputNames.map((_, i) => bound(table.inputLimits?.lower?.[i])), upper: table.inputNames.map((_, i) => bound(table.inputLimits?.upper?.[i])) }
      : null,
  };
  if (search === 'tree' && tree) {
    if (tree.regionCount !== table.regions.length || tree.ntheta !== n) throw new Error('search tree does not match the table');
    for (const k of tree.nodeHyperplane) {
      for (let j = 0; j < n; j++) out.nodePlane.push(round(tree.hyperplanes.a[k][j]));
      out.nodePlane.push(round(tree.hyperplanes.b[k]));
    }
  }
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
  const law = (r: number): number[] => {
    const u = new Array<number>(ar.nu);
    for (let i = 0; i < ar.nu; i++) {
      const row = r * ar.nu + i;
      let s = ar.lawG[row];
      if (f) for (let j = 0; j < n; j++) s = Math.fround(s + Math.fround(ar.lawF[row * n + j] * theta[j]));
      else for (let j = 0; j < n; j++) s += ar.lawF[row * n + j] * theta[j];
      const lo = ar.clamp?.lower[i];
      const hi = ar.clamp?.upper[i];
      if (lo !== null && lo !== undefined && s < lo) s = lo;
      if (hi !== null && hi !== undefined && s > hi) s = hi;
      u[i] = s;
    }
    return u;
  };
  if (ar.search === 'sequential') {
    for (let r = 0; r < ar.regionCount; r++) if (inside(r)) return { region: r, u: law(r) };
    return { region: -1, u: null };
  }
  let ref = ar.root;
  for (let d = 0; d < ar.maxDepth && ref >= 0; d++) {
    const at = ref * (n + 1);
    ref = dot(ar.nodePlane, at) <= ar.nodePlane[at + n] ? ar.nodeLeft[ref] : ar.nodeRight[ref];
  }
  if (ref >= 0) return { region: -1, u: null };
  const leaf = -ref - 1;
  for (let k = ar.leafStart[leaf]; k < ar.leafStart[leaf + 1]; k++) {
    const r = ar.leafRegion[k];
    if (inside(r)) return { region: r, u: law(r) };
  }
  return { region: -1, u: null };
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

/**
 * Worst-case cost of one evaluation: descent to the deepest-costing leaf (nθ multiply-adds and one
 * comparison per node), then every candidate region's rows tested in full, then the law (nu·nθ).
 */
export function costFigures(ar: Pick<EmitArrays, 'search' | 'ntheta' | 'nu' | 'regionCount' | 'regionRowStart' | 'root' | 'nodeLeft' | 'nodeRight' | 'leafStart' | 'leafRegion'> & { clamp?: EmitArrays['clamp'] }): CostFigures {
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
    worstCmp = all + clampCmp;
  } else {
    const depths = leafDepths({ root: ar.root, nodeLeft: ar.nodeLeft, nodeRight: ar.nodeRight, leafStart: ar.leafStart });
    depths.forEach((d, leaf) => {
      let rr = 0;
      for (let k = ar.leafStart[leaf]; k < ar.leafStart[leaf + 1]; k++) rr += rows(ar.leafRegion[k]);
      worstDepth = Math.max(worstDepth, d);
      worstMacs = Math.max(worstMacs, d * n + rr * n + lawMacs);
      worstCmp = Math.max(worstCmp, d + rr + clampCmp);
    });
  }
  return { search: ar.search, regions: ar.regionCount, worstDepth, worstMultiplyAdds: worstMacs, worstComparisons: worstCmp, clampComparisons: clampCmp };
}
