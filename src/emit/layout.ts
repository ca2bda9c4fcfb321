/**
 * The language-neutral description of a build's arrays: what each element is (a real number, a
 * signed reference, an unsigned index or an offset) and the range of its values, never a type name
 * of some language or a byte count. Each target's printer (src/emit/targets/) maps the kinds to its
 * own element types and applies its own rules (C, for instance, has no empty arrays); the JSON/CSV
 * exports write this layout as it is.
 */
import { headArrays, type EmitArrays, type SearchIndex, type SearchKind } from './arrays.js';

/**
 * - `f-real`: a real number (stored at the build's precision)
 * - `q-fixed`: an integer standing for a real scaled by a power of two (fixed-point builds; the
 *   array's `fixed` entry says how many bits and which scaling)
 * - `i-index`: a signed reference (tree children: r ≥ 0 a node, r < 0 the leaf −r−1)
 * - `u-index`: an unsigned index into another array (a region number)
 * - `u-count`: an unsigned offset/count (row and leaf start offsets, nondecreasing)
 */
export type ElementKind = 'f-real' | 'q-fixed' | 'i-index' | 'u-index' | 'u-count';

/**
 * Scaling of a `q-fixed` array: element k stands for integer · 2^−frac[k mod frac.length]. Row-major
 * coefficient arrays have one entry per θ column (the array's shift minus that θ's fraction bits),
 * θ bounds one per θ, constants a single entry.
 */
export interface FixedScaling {
  /** signed integer width the values need (16, 32 or 64) */
  bits: 16 | 32 | 64;
  frac: number[];
}

/** Integers wider than 2^53 (64-bit fixed-point constants) stay exact as bigint. */
export type LayoutValue = number | bigint;

export interface LayoutArray {
  name: string;
  kind: ElementKind;
  values: LayoutValue[];
  /** smallest and largest value ([0, 0] for an empty array) */
  range: [LayoutValue, LayoutValue];
  fixed?: FixedScaling;
}

function range(values: LayoutValue[]): [LayoutValue, LayoutValue] {
  if (!values.length) return [0, 0];
  let lo = values[0];
  let hi = values[0];
  for (const v of values) {
    if (v < lo) lo = v;
    if (v > hi) hi = v;
  }
  return [lo, hi];
}

export function layoutArray(name: string, kind: ElementKind, values: LayoutValue[], fixed?: FixedScaling): LayoutArray {
  return fixed ? { name, kind, values, range: range(values), fixed } : { name, kind, values, range: range(values) };
}

/**
 * The arrays of a float/double build, in the order the targets declare them. Tree arrays appear
 * only for tree search; a tree of one leaf has empty node arrays (kept: the layout states what
 * exists, a printer decides what its language can declare).
 */
export function layoutOf(ar: EmitArrays): LayoutArray[] {
  // the descent: a box-tree node compares one coordinate, a hyperplane node a plane stored inline
  const planes =
    ar.search === 'boxtree'
      ? [layoutArray('node_axis', 'u-index', ar.nodeAxis), layoutArray('node_split', 'f-real', ar.nodeSplit)]
      : ar.search === 'grid'
        ? [layoutArray('grid_cells', 'u-count', ar.gridCells), layoutArray('grid_lo', 'f-real', ar.gridLower), layoutArray('grid_scale', 'f-real', ar.gridScale)]
        : [layoutArray('node_plane', 'f-real', ar.nodePlane), ...headLayout(ar)];
  const data = [layoutArray('region_a', 'f-real', ar.regionA), layoutArray('region_b', 'f-real', ar.regionB), layoutArray('law_f', 'f-real', ar.lawF), layoutArray('law_g', 'f-real', ar.lawG)];
  if (ar.lawC.length > 0) data.push(layoutArray('law_c', 'f-real', ar.lawC));
  if (ar.regionSlack.length > 0) data.push(layoutArray('region_slack', 'f-real', ar.regionSlack));
  return structureLayout(ar, planes, data);
}

/** The head of a plane descent (headArrays), when the build has one: its planes column by column and the references below it. */
function headLayout(ar: EmitArrays): LayoutArray[] {
  if (!(ar.headLevels > 0)) return [];
  const h = headArrays(ar);
  return [layoutArray('node_head_plane', 'f-real', h.plane), layoutArray('node_head_ref', 'i-index', h.ref)];
}

/**
 * Arrays in declaration order for any build: the search structure's node and index arrays (every
 * search but sequential), the region row offsets, then the region and law data.
 */
export function structureLayout(ix: SearchIndex & { search: SearchKind }, planes: LayoutArray[], data: LayoutArray[]): LayoutArray[] {
  // a grid cell's first candidate sits in leaf_first, read together with the cell's offsets (splitFirst)
  const split = ix.search === 'grid' ? splitFirst(ix.leafStart, ix.leafRegion, ix.regionRowStart.length - 1, ix.leafSure) : null;
  const tree =
    ix.search !== 'sequential'
      ? [
          ...planes,
          layoutArray('node_left', 'i-index', ix.nodeLeft),
          layoutArray('node_right', 'i-index', ix.nodeRight),
          ...(split
            ? [layoutArray('leaf_first', 'u-index', split.first), layoutArray('leaf_start', 'u-count', split.start), layoutArray('leaf_region', 'u-index', split.rest)]
            : [layoutArray('leaf_start', 'u-count', ix.leafStart), layoutArray('leaf_region', 'u-index', ix.leafRegion)]),
        ]
      : [];
  return [...tree, layoutArray('region_row_start', 'u-count', ix.regionRowStart), ...data];
}

/**
 * A leaf list stored as each leaf's first candidate (`first[leaf]`, or `regionCount` for an empty
 * leaf) and the rest (`rest[start[leaf] .. start[leaf+1])`), the order kept. The grid's cells use it:
 * the first candidate, usually the region found (most-often-found first), is then loaded beside the
 * cell's offsets instead of after them, one dependent load less on the way to the region's rows
 * (2-D emit bench: per-point median 55–57 against 55–64 ns, paired, loaded). Bytes: one index more
 * per empty cell. `sure[leaf]` (grid cells of float builds, gridSureCells): the leaf's first candidate r
 * is stored as regionCount + 1 + r, telling the generated code to take r without a test.
 */
export function splitFirst(leafStart: number[], leafRegion: number[], regionCount: number, sure?: number[]): { first: number[]; start: number[]; rest: number[] } {
  const first: number[] = [];
  const start = [0];
  const rest: number[] = [];
  for (let leaf = 0; leaf + 1 < leafStart.length; leaf++) {
    const from = leafStart[leaf];
    const to = leafStart[leaf + 1];
    // a sure leaf (grid cell deep inside its first candidate r, gridSureCells) stores regionCount + 1 + r
    first.push(to > from ? (sure?.[leaf] ? regionCount + 1 + leafRegion[from] : leafRegion[from]) : regionCount);
    // a sure leaf's other candidates are never read: not stored
    if (!sure?.[leaf]) for (let k = from + 1; k < to; k++) rest.push(leafRegion[k]);
    start.push(rest.length);
  }
  return { first, start, rest };
}

/** How the arrays fit together, in words (written into the JSON export). */
export const LAYOUT_TEXT =
  'node child r >= 0 is a node, r < 0 is leaf -r-1; node k plane at node_plane[k*(nt+1)..]: nt coefficients a then b, left when a·θ <= b; region r rows region_row_start[r]..[r+1], inside when region_a·θ <= region_b (slack included); u = law_g[r*nu+i] + law_f[(r*nu+i)*nt..]·θ';
/** Addition of a plane descent with a head (EmitArrays.headLevels, written after LAYOUT_TEXT when it applies). */
export const LAYOUT_TEXT_HEAD =
  'head of the descent (H levels, K = 2^H − 1 slots in heap order, slot k has children 2k+1 left and 2k+2 right, slot 0 the root, and an unused zero slot K; W = 2^H): slot k plane node_head_plane[j*W + k], j < nt the coefficients, j = nt the b (a leaf above depth H fills its slots with a zero plane); from k = 0, H times k = 2k + 2 − (plane k·θ <= b_k), then the descent goes on from node_head_ref[k − K]';
/** Additions of the box tree, the grid and of the centred law (written after LAYOUT_TEXT when they apply). */
export const LAYOUT_TEXT_BOXTREE = 'box tree: node k goes left when θ[node_axis[k]] <= node_split[k]';
export const LAYOUT_TEXT_GRID =
  'grid: no nodes; per coordinate q = (θ[j] − grid_lo[j])·grid_scale[j] (each step rounded), cell c_j = 0 when q < 0 or NaN, grid_cells[j] − 1 when q >= grid_cells[j], else trunc(q); leaf = the row-major cell index (last coordinate fastest); the candidates of the cell in order: leaf_first[leaf] (the region count when the cell has none), then leaf_region[leaf_start[leaf]..leaf_start[leaf+1]); leaf_first[leaf] = region count + 1 + r: the cell lies deep inside region r, which is the answer without a test (float builds)';
export const LAYOUT_TEXT_CENTRED =
  'centred law: u = law_g[r*nu+i] + law_f[(r*nu+i)*nt..]·(θ − law_c[r*nt..]), the subtraction rounded first; region rows tested around the same centre, inside when region_a·(θ − law_c) − region_b <= region_slack[r] (region_b without slack), best fit: the smallest largest residual wins';
