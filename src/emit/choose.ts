/**
 * Point-location structures of a build and the choice between them by a cost model: every
 * candidate is built, its exact memory (the target's own byte count, gcc's sizeof for C) and its
 * worst-case operations (the maximum over every leaf and path, costFigures) are measured, and the
 * default is the cheapest one that is safe in float and whose location arrays stay within half of
 * the region data. The reason is kept as text for the generated header and the report.
 */
import type { TableFile } from '../table/format.js';
import { buildSearchTree, collapseTree, planeMargin, TreeTooLargeError, type SearchTree, type TreeOptions } from '../partition/tree.js';
import { buildBoxTree, type BoxTreeOptions } from '../partition/boxtree.js';
import { buildArrays, costFigures, meanProfile, ORDER_POINTS_MIN, searchIndex, type EmitArrays, type Locator, type MeanProfile, type Precision, type SearchKind } from './arrays.js';
import { buildGrid } from './grid.js';
import type { EmitTarget, TargetCost, TargetOptions } from './targets/target.js';

/** Location arrays may take at most this fraction of the region data (half-spaces plus laws). */
export const LOCATION_BUDGET = 0.5;
/** The builders aim a little below the budget (their byte estimate is conservative, the check is exact). */
const BUILD_BUDGET = 0.45;
/** Worst-case multiply-adds a capped tree's leaves may cost, per θ dimension is leafRows·nθ. */
export const CAPPED_LEAF_MACS = 512;
/**
 * `broad` collapses every subtree of the capped tree whose regions hold at most BROAD_LEAF_MACS/nθ
 * rows (or twice that, see broadest) into one leaf. A broad leaf lists tens of regions,
 * most-often-found first, and the scan usually stops at the first with the early exit of best fit,
 * while each level of the descent waits for a chain of loads, products and sums: in the generated C
 * a shallower tree with broader leaves is faster. Measured on the locate bench's 5-D table (1 153
 * regions, float, paired, loaded): leaves of 102 rows (capped) 213–238 ns, 400 159–171 ns, 800
 * 169–182 ns per lookup (median over points); 400 rows at 5-D is 2 000/nθ.
 */
export const BROAD_LEAF_MACS = 2000;

/**
 * Weights of the latency model (meanLatency), in operations (multiply-adds and comparisons as
 * costFigures counts them). A lookup's time is not its operation count: each pass of a descent waits
 * for a chain of dependent loads, products and sums (the next pass needs its result), and each
 * candidate region for its row offsets, slack and centre and for the branch that ends its test, while
 * the rows of one region are independent sums the core overlaps. Calibrated on 2026-12-03 by timing
 * the compiled C (float, gcc -O2, per-point medians, alternated in one process per table, 3 and 7
 * rounds, load 5–10, 2.0 GHz x86-64 shared by other jobs) of every structure of the locate bench's
 * tables in 2-D…6-D — capped, broad collapsed at 2 000 … 8 000/nθ rows, box tree, grid: 58 builds in
 * 8 series — and taking the weights on the plateau that orders them best: 138 of the 150 pairs more
 * than 5 % apart in the order measured (mean operations alone: 128), and the pick per series 1.003×
 * the fastest measured on average, 1.025× at most (mean operations: 1.028×, 1.112×). In-sample figures;
 * see DEVELOPERS.md, "Latency model".
 */
export const LATENCY_WEIGHTS = {
  /** added per pass of the descent loop (PLANE_DESCENT_LEVELS levels of a hyperplane tree, one box-tree level, the grid's cell), times nθ + 2 */
  pass: 3,
  /** added per candidate region tested */
  candidate: 10,
} as const;

/**
 * Latency-weighted operations of one lookup, the cost model's typical case since 2026-12-03 (it was
 * the mean operations): meanProfile's operations plus LATENCY_WEIGHTS for its descent passes and its
 * candidates, on the same seeded points. Only the order it puts the structures of one table in is used.
 */
export function meanLatency(p: MeanProfile, ntheta: number): number {
  return p.operations + LATENCY_WEIGHTS.pass * (ntheta + 2) * p.passes + LATENCY_WEIGHTS.candidate * p.candidates;
}

export interface LocatorOptions {
  tree?: TreeOptions;
  boxTree?: BoxTreeOptions;
  /** budget in bytes for the location arrays (capped and box tree; the plain tree gives up beyond it) */
  maxBytes?: number;
  tableHash?: string;
  /** passed to the target's build (fixed point: θ fraction bits) */
  targetOptions?: TargetOptions;
  /** `broad`: the capped tree of the same table and options, when already built (else it is built) */
  capped?: SearchTree;
}

/** Float-layout bytes of the region data (rows of A and b, law F and g and centre): the builders' budget basis. */
export function regionDataBytes(table: TableFile): number {
  const n = table.dims.ntheta;
  let rows = 0;
  for (const r of table.regions) rows += r.A.length;
  return 4 * (rows * (n + 1) + table.regions.length * (table.dims.nu * (n + 1) + n) + table.regions.length + 1);
}

/**
 * An upper bound of the C target's region arrays in a float or double build (what splitBytes counts
 * as the regions): regionDataBytes with the region slacks (float) and 8-byte reals (double).
 */
export function regionDataUpper(table: TableFile, precision: 'float' | 'double'): number {
  return (precision === 'double' ? 2 : 1) * (regionDataBytes(table) + 4 * table.regions.length);
}

/**
 * Build the locator of one structure. `tree`: the hyperplane tree as before (one region per leaf);
 * `capped`: hyperplane tree with float-safe side overlap, depth ≤ 4·log2(regions), leaves of at most
 * CAPPED_LEAF_MACS/nθ rows, within the byte budget, splitting on the regions' facet planes and on
 * axis-aligned planes at the quartiles of the node's region centres; `broad`: the capped tree with its subtrees of up to
 * BROAD_LEAF_MACS/nθ rows (or twice that, where it measures cheaper: broadest) collapsed into leaves; `boxtree`: bounding-box tree within the budget;
 * `grid`: the finest uniform cell grid within the budget (null when none fits).
 */
export function buildLocator(table: TableFile, search: SearchKind, options: LocatorOptions = {}): Locator | null {
  const n = table.dims.ntheta;
  const R = table.regions.length;
  const maxBytes = options.maxBytes ?? BUILD_BUDGET * regionDataBytes(table);
  switch (search) {
    case 'sequential':
      return null;
    case 'tree':
      return buildSearchTree(table.regions, n, { ...options.tree, tableHash: options.tableHash ?? options.tree?.tableHash });
    case 'capped':
      return buildSearchTree(table.regions, n, {
        margin: planeMargin(table.regions, table.box),
        leafRows: Math.max(2 * n + 2, Math.floor(CAPPED_LEAF_MACS / n)),
        // 4·log2(R): at 3·log2(R) the 7 819-region boom table stopped at the cap with 1 000-row leaves (4 160 multiply-adds worst case; 2 596 at this cap)
        maxDepth: Math.max(8, Math.ceil(4 * Math.log2(Math.max(2, R)))),
        duplicationWeight: 0.5,
        axisCandidates: true,
        nodeBudget: 2e5,
        maxBytes,
        ...options.tree,
        tableHash: options.tableHash ?? options.tree?.tableHash,
      });
    case 'broad':
      return broadest(table, options.capped ?? (buildLocator(table, 'capped', options) as SearchTree), Math.floor(BROAD_LEAF_MACS / n));
    case 'boxtree':
      return buildBoxTree(table.regions, n, table.box, { leafRows: 4 * (n + 1), maxBytes, ...options.boxTree });
    case 'grid':
      return buildGrid(table, { maxBytes });
  }
}

/**
 * `broad`: the capped tree with every subtree of at most `leafRows` rows collapsed into one leaf
 * (collapseTree), or of at most BROAD_COARSER × leafRows rows, whichever the latency model makes the
 * fastest (meanLatency on the float build over seeded points; ties to the finer one) among those whose
 * worst-case operations stay within WORST_CASE_FACTOR of the finest one's and of the capped tree's
 * (the cost model's own rule, so that the coarser tree is not taken where the model would then refuse
 * it). Built from the capped tree, so `auto` builds the hyperplane tree once. Until 2026-12-03 the
 * choice was by mean operations, which weigh a descent pass (a chain of dependent loads and sums) like
 * a leaf row's independent products: in 6-D leaves 1.5–2× coarser were 10–15 % faster while the
 * operations barely moved.
 */
function broadest(table: TableFile, capped: SearchTree, leafRows: number): SearchTree {
  const rows = (r: number) => table.regions[r].A.length;
  const fine = collapseTree(capped, rows, leafRows);
  // the worst cases first (no build needed): a coarser tree is measured only when the rule allows it
  const regionRowStart = [0];
  for (const r of table.regions) regionRowStart.push(regionRowStart[regionRowStart.length - 1] + r.A.length);
  const worst = (t: SearchTree) => {
    const c = costFigures({ ...searchIndex('broad', t, regionRowStart), search: 'broad', ntheta: table.dims.ntheta, nu: table.dims.nu, regionCount: table.regions.length, bestFit: true });
    return c.worstMultiplyAdds + c.worstComparisons;
  };
  // within the rule's factor of the capped tree's worst case too: pickCandidate compares broad with
  // capped, and a broad tree past 1.5 x capped's worst case is never picked (on the 5-D bench table
  // the 1.5 x collapse passed capped's limit, and the pick fell back to capped: 245 ns instead of broad)
  const limit = WORST_CASE_FACTOR * Math.min(worst(fine), worst(capped));
  // trial builds ordered on as many points as before s23 (4 per leaf within [20 000, 60 000]), so the
  // steps are compared as they were; the chosen tree is built again with the full ordering
  // (ORDER_POINTS_PER_LEAF) when measured — ordering every trial in full cost ~1 s each in 6-D
  const latency = (t: SearchTree) =>
    meanLatency(meanProfile(buildArrays(table, 'float', 'broad', t, false, Math.min(60000, Math.max(ORDER_POINTS_MIN, 4 * t.stats.leaves))), table.box), table.dims.ntheta);
  let best = fine;
  let bestLatency = NaN;
  let leaves = fine.stats.leaves;
  const seen = new Set([leaves]);
  const consider = (t: SearchTree): void => {
    if (Number.isNaN(bestLatency)) bestLatency = latency(fine);
    const m = latency(t);
    if (m < bestLatency) {
      best = t;
      bestLatency = m;
    }
  };
  // the last step within the rule and the first past it
  let lastOk = 1;
  let firstOver = NaN;
  for (const factor of BROAD_COARSER) {
    const t = collapseTree(capped, rows, Math.floor(factor * leafRows));
    if (t.stats.leaves === leaves) continue;
    leaves = t.stats.leaves;
    seen.add(leaves);
    if (worst(t) > limit) {
      if (Number.isNaN(firstOver)) firstOver = factor;
      continue;
    }
    if (Number.isNaN(firstOver)) lastOk = factor;
    consider(t);
  }
  // between the last step within the rule and the first past it, bisection for the coarsest collapse
  // the rule allows (the steps are coarse: on the locate bench's 6-D table 1.75 was within it and 2
  // just past it, while 1.95 was within it and 3 % faster, see BROAD_BISECT)
  let lo = lastOk;
  let hi = firstOver;
  for (let i = 0; i < BROAD_BISECT && hi > lo; i++) {
    const mid = (lo + hi) / 2;
    const t = collapseTree(capped, rows, Math.floor(mid * leafRows));
    if (worst(t) > limit) {
      hi = mid;
      continue;
    }
    lo = mid;
    if (seen.has(t.stats.leaves)) continue;
    seen.add(t.stats.leaves);
    consider(t);
  }
  return best;
}

/**
 * Bisection steps of `broad` between the last collapse within the worst-case rule and the first past
 * it (broadest). Locate bench, 6-D, with the descent head (float C, per-point medians, 15
 * alternations, load ≈ 7, 2026-12-03): leaves of 1.75 / 1.875 / 1.95 / 2 × 2 000/nθ rows 254 / 246 /
 * 246 / 241 ns, worst cases 4 985 / 5 320 / 5 516 / 5 604 against the limit 5 557; the steps alone
 * stopped at 1.75; three bisection steps take 1.9375 (201 leaves, worst case 5 426, latency model 445.5
 * against 451.1). In 5-D every step past the finest collapse is over the limit, and the bisection
 * between 1 and 1.25 finds none faster by the model (the pick stays).
 */
const BROAD_BISECT = 3;

/**
 * The coarser collapses `broad` measures beside leafRows (factors of it, ascending). 1.5 was added on
 * 2026-12-03: on the locate bench's tables (float C, per-point medians, 9 alternations, load 7–9)
 * leaves of 1.5 × 2 000/nθ rows took 5-D 172 against 189 ns (2 × : 183, worst case over the rule's
 * limit), 6-D 211 against 230 ns (2 × : 195 ns, worst case 5 546 just over the limit of 5 470); the
 * steps between them with the latency model (the worst-case rule is the bound that stops them).
 */
const BROAD_COARSER = [1.25, 1.5, 1.75, 2];

/** The part of a build's memory that locates θ (tree arrays) and the part that is the regions themselves. */
export function splitBytes(cost: TargetCost, precision: string): { location: number; regions: number } {
  let location = 0;
  let regions = 0;
  for (const a of cost.bytes[precision]?.arrays ?? []) {
    if (a.name.startsWith('node_') || a.name.startsWith('leaf_') || a.name.startsWith('grid_')) location += a.bytes;
    else regions += a.bytes;
  }
  return { location, regions };
}

export interface Candidate {
  search: SearchKind;
  locator: Locator | null;
  /** null when the structure could not be built within the budget */
  cost: TargetCost | null;
  location: number;
  regions: number;
  /** the descent provably sends every float θ to a leaf holding each region that contains it (side overlap ≥ float rounding) */
  floatSafe: boolean;
  rejected: string | null;
  buildSeconds: number;
  /** mean multiply-adds plus comparisons per evaluation on seeded points of the box (float/double C builds; null for other builds) */
  meanOps: number | null;
  /** latency-weighted operations per evaluation (meanLatency of the same points; null where meanOps is) */
  meanLatency: number | null;
  /** the target's build measured (its arrays, leaf order included), null when not built; reused by emit for the chosen one */
  build: unknown;
}

/**
 * Side tests per node of the cost model's plain tree (the capped tree's figure): without it the
 * tree's split search (4·10⁶ tests per node by default) ran for ~10⁴ nodes in 6-D before the memory
 * budget stopped it, about 120 s of the locate bench (loaded). `--search tree` keeps the default.
 */
export const CANDIDATE_NODE_BUDGET = 2e5;

/** Why `auto` never takes the plain tree for a float build (it is then listed without being built). */
export const FLOAT_TREE_REJECTED = 'descent not proven safe in float (no side overlap); not built';

/** Candidates whose worst case is within this factor of the least worst case compete on their mean operations. */
export const WORST_CASE_FACTOR = 1.5;

/**
 * Tables whose region data (regionDataBytes) pass this many bytes let each candidate's build go as
 * soon as it is measured, and the chosen one is built again (builds are deterministic: the same
 * arrays). Holding every candidate's build and locator until the pick took the 114 379-region 3-D
 * channel-bank table's default float emit to 2.43 GB (one build at a time: see DEVELOPERS.md).
 */
export const RELEASE_BUILDS_ABOVE_BYTES = 8 * 2 ** 20;

/** Options of measureCandidates. */
export interface MeasureOptions extends LocatorOptions {
  /** let each build and locator go once measured (Candidate.build and .locator null); default: above RELEASE_BUILDS_ABOVE_BYTES of region data */
  releaseBuilds?: boolean;
}

/** Measure one structure: build it (with the cost model's budgets), cost it and time its seeded points. */
function measureOne<B>(table: TableFile, target: EmitTarget<B>, precision: string, search: SearchKind, options: LocatorOptions, profile: boolean): Candidate {
  const t0 = Date.now();
  const dataBytes = regionDataBytes(table);
  let locator: Locator | null = null;
  // the plain tree's descent has no side overlap, so a float build could never take it: not built
  // (its give-up over the budget still took 21.5 s of the locate bench's 6-D table, loaded)
  if (search === 'tree' && precision === 'float')
    return { search, locator: null, cost: null, location: Infinity, regions: 0, floatSafe: false, rejected: FLOAT_TREE_REJECTED, buildSeconds: 0, meanOps: null, meanLatency: null, build: null };
  try {
    // the plain tree is abandoned once its node arrays alone would pass the budget, or (float and
    // double builds) as soon as its finished arrays are sure to: their smallest size from what is
    // built and pending (TreeOptions.giveUpBytes) against an upper bound of the region data
    const tree =
      search === 'tree'
        ? {
            ...options.tree,
            maxNodes: options.tree?.maxNodes ?? Math.ceil((LOCATION_BUDGET * dataBytes) / (4 * (table.dims.ntheta + 1) + 4)),
            // split candidates thinned to CANDIDATE_NODE_BUDGET side tests per node, as the capped tree's
            nodeBudget: options.tree?.nodeBudget ?? CANDIDATE_NODE_BUDGET,
            giveUpBytes: options.tree?.giveUpBytes ?? (precision === 'float' || precision === 'double' ? LOCATION_BUDGET * regionDataUpper(table, precision) : undefined),
          }
        : options.tree;
    locator = buildLocator(table, search, { ...options, tree });
  } catch (e) {
    if (!(e instanceof TreeTooLargeError)) throw e;
    return { search, locator: null, cost: null, location: Infinity, regions: 0, floatSafe: false, rejected: e.reason, buildSeconds: (Date.now() - t0) / 1000, meanOps: null, meanLatency: null, build: null };
  }
  if (search === 'grid' && !locator)
    return { search, locator: null, cost: null, location: Infinity, regions: 0, floatSafe: false, rejected: 'no grid of 2 or more cells per coordinate fits the memory budget', buildSeconds: (Date.now() - t0) / 1000, meanOps: null, meanLatency: null, build: null };
  const build = target.build(table, precision, search, locator, options.targetOptions);
  const cost = target.cost(build);
  const { location, regions } = splitBytes(cost, precision);
  const floatSafe = search !== 'tree';
  let rejected: string | null = null;
  if (location > LOCATION_BUDGET * regions) rejected = `location arrays ${location} B > ${LOCATION_BUDGET} x region data ${regions} B`;
  else if (precision === 'float' && !floatSafe) rejected = FLOAT_TREE_REJECTED;
  const ar = build as unknown as EmitArrays;
  const prof = profile && (ar.precision === 'float' || ar.precision === 'double') && Array.isArray(ar.regionA) ? meanProfile(ar, table.box) : null;
  const meanOps = prof ? prof.operations : null;
  const latency = prof ? meanLatency(prof, table.dims.ntheta) : null;
  return { search, locator, cost, location, regions, floatSafe, rejected, buildSeconds: (Date.now() - t0) / 1000, meanOps, meanLatency: latency, build };
}

/** Build every structure (or the given ones) and measure it with the target's cost report. */
export function measureCandidates<B>(table: TableFile, target: EmitTarget<B>, precision: string, kinds: readonly SearchKind[], options: MeasureOptions = {}): Candidate[] {
  const out: Candidate[] = [];
  const release = options.releaseBuilds ?? regionDataBytes(table) > RELEASE_BUILDS_ABOVE_BYTES;
  // broad is the capped tree with subtrees collapsed: built once when both are measured
  let cappedBuilt: SearchTree | undefined;
  for (const search of kinds) {
    const c = measureOne(table, target, precision, search, { ...options, capped: search === 'broad' ? cappedBuilt : undefined }, true);
    if (search === 'capped' && c.locator) cappedBuilt = c.locator as SearchTree;
    if (release) {
      c.build = null;
      c.locator = null;
    }
    out.push(c);
  }
  return out;
}

/**
 * The build and locator of a candidate measured with releaseBuilds, made again with the options
 * measureCandidates had (the same arrays: every builder is deterministic; `broad` builds its capped
 * tree anew).
 */
export function rebuildCandidate<B>(table: TableFile, target: EmitTarget<B>, precision: string, search: SearchKind, options: LocatorOptions = {}): { build: B | null; locator: Locator | null } {
  const c = measureOne(table, target, precision, search, { ...options, capped: undefined }, false);
  return { build: c.build as B | null, locator: c.locator };
}

/** Worst-case operations of one evaluation: multiply-adds plus comparisons. */
export function worstOps(c: Candidate): number {
  return c.cost ? c.cost.worstMultiplyAdds + c.cost.worstComparisons : Infinity;
}

/**
 * The cheapest admissible candidate; sequential search is always admissible. Cheapest: among the
 * admissible candidates whose worst-case operations are within WORST_CASE_FACTOR of the least, the
 * fewest latency-weighted operations on seeded points (meanLatency, when every one of them has that measure; it
 * was the fewest mean operations until 2026-12-03), then the fewest worst-case operations, then the
 * fewest location bytes.
 */
export function pickCandidate(cands: Candidate[]): { chosen: Candidate; reason: string[] } {
  const ok = cands.filter((c) => !c.rejected && c.cost);
  ok.sort((a, b) => worstOps(a) - worstOps(b) || a.location - b.location);
  const least = ok.length ? worstOps(ok[0]) : Infinity;
  const near = ok.filter((c) => worstOps(c) <= WORST_CASE_FACTOR * least);
  const byMean = near.length > 1 && near.every((c) => c.meanLatency !== null);
  if (byMean) near.sort((a, b) => a.meanLatency! - b.meanLatency! || worstOps(a) - worstOps(b) || a.location - b.location);
  const chosen = near[0] ?? cands.find((c) => c.search === 'sequential');
  if (!chosen) throw new Error('no point-location structure could be built');
  const line = (c: Candidate) =>
    c.cost
      ? `${c.search}: ${c.cost.worstMultiplyAdds} multiply-adds + ${c.cost.worstComparisons} comparisons worst case${c.meanOps !== null ? `, ${c.meanOps.toFixed(1)} operations on average` : ''}${c.meanLatency !== null ? ` (${c.meanLatency.toFixed(1)} latency-weighted)` : ''}, location ${c.location} B = ${(c.location / Math.max(1, c.regions)).toFixed(3)} x region data${c.rejected ? ` - rejected: ${c.rejected}` : ''}`
      : `${c.search}: rejected: ${c.rejected}`;
  const reason = [
    `${chosen.search} search, chosen by the cost model: among the structures that are safe in float, whose location arrays are at most ${LOCATION_BUDGET} x the region data and whose worst-case operations are within ${WORST_CASE_FACTOR} x the least, the fewest latency-weighted operations on average over seeded points of the box (operations plus a weight per descent pass and per candidate region, calibrated by timing the compiled C; then the fewest worst-case operations).`,
    ...cands.map(line),
  ];
  return { chosen, reason };
}
