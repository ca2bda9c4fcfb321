/**
 * Uniform cell grid over the parameter box for point location (our own structure, for the low θ
 * dimensions where the cells stay few): the box is cut into G_j equal cells per coordinate, θ's
 * cell is computed with one subtraction, one multiplication and two comparisons per coordinate (no
 * descent, no data-dependent loads before the cell's list), and each cell lists every region that can
 * be the answer for a θ the generated code maps into that cell; those are then tested in full (best
 * fit in float, first fit in double), exactly as a tree leaf's candidates.
 *
 * Float safety by construction:
 *  - the cell is computed as q = fl(fl(θ_j − lo_j)·s_j) with lo_j and s_j floats; the exact cell
 *    boundaries are lo_j + k/s_j (real arithmetic on those floats). Two roundings give
 *    |q − (θ_j − lo_j)·s_j| ≤ 2u·|θ_j − lo_j|·s_j (1 + u) (u = 2⁻²⁴; Higham, Accuracy and Stability of
 *    Numerical Algorithms, §2.2 — from memory), so a θ mapped to cell k lies within its exact cell
 *    widened by δ_j = 4u·(|lo_j| + |θ_j|max + w_j) on each side (generous: it also covers double);
 *    q < 0 (and NaN) goes to the first cell and q ≥ G_j to the last, so the outer cells reach to ∓∞;
 *  - a region R can be the answer for θ only if its float row tests pass, fl(a·(θ − c) − b̂) ≤ S_R,
 *    and each rounding error is below S_R (regionTests), so θ satisfies a·θ ≤ b + 2·S_R exactly; the
 *    builder widens every row by 2.5·S_R (at least tol.inside, which covers double first fit) and
 *    takes the bounding box of that widened region.
 * A region is listed in every cell whose widened interval meets its widened bounding box in every
 * coordinate. See DEVELOPERS.md, "Point location in float".
 */
import { tol } from '../tol.js';
import type { TableFile } from '../table/format.js';
import { regionBounds } from '../partition/boxtree.js';
import { regionTests, type EmitArrays } from './arrays.js';

export const GRID_FORMAT = 'tessera-grid';

/** Unit roundoff of IEEE single precision (2⁻²⁴): a machine constant, not a tolerance. */
const U = 2 ** -24;

export interface GridIndex {
  format: typeof GRID_FORMAT;
  ntheta: number;
  regionCount: number;
  /** cells per coordinate */
  cells: number[];
  /** grid origin and cells per unit of θ, per coordinate (floats, exactly) */
  lower: number[];
  scale: number[];
  /** cell k (row-major, the last coordinate fastest) lists regions leafRegions[leafStart[k] .. leafStart[k+1]) */
  leafStart: number[];
  leafRegions: number[];
  /** per coordinate, the widening of every cell for the rounding of the cell computation */
  delta: number[];
  stats: { nodes: number; leaves: number; maxDepth: number; maxLeafSize: number; maxLeafRows: number; copies: number; buildSeconds: number };
}

export interface GridOptions {
  /** memory budget of the location arrays in bytes (float layout); the finest grid within it is kept */
  maxBytes: number;
  /** at most this many cells in all (default 2¹⁶) */
  maxCells?: number;
}

/**
 * Bytes of a grid's location arrays as the C target declares them: per cell its first candidate
 * (leaf_first, an index up to twice the region count + 1: gridSureCells), the offsets of the other candidates and their list
 * (2 or 4 bytes each; layout.ts splitFirst), lower/scale floats, cell counts. `nonEmpty`: cells
 * with at least one candidate (default: all, an upper bound).
 */
export function gridBytes(cells: number[], copies: number, regionCount: number, nonEmpty?: number): number {
  const m = cells.reduce((a, b) => a * b, 1);
  const rest = copies - Math.min(copies, nonEmpty ?? m);
  const offset = rest <= 65535 ? 2 : 4;
  const index = regionCount <= 65535 ? 2 : 4;
  // leaf_first holds up to 2·regionCount + 1 (a sure cell, gridSureCells)
  const first = 2 * regionCount + 1 <= 65535 ? 2 : 4;
  const counts = Math.max(...cells) <= 65535 ? 2 : 4;
  return m * first + (m + 1) * offset + rest * index + cells.length * (8 + counts);
}

/**
 * Build the finest uniform grid (the same count G in every coordinate, G = 2, 3, …) whose arrays fit
 * `maxBytes`, with at most maxCells cells and 16 per region, or null when not even G = 2 fits. Deterministic.
 */
export function buildGrid(table: TableFile, options: GridOptions): GridIndex | null {
  const t0 = Date.now();
  const n = table.dims.ntheta;
  const R = table.regions.length;
  const maxCells = options.maxCells ?? 65536;
  const lower = Array.from(table.box.lower, (v) => Math.fround(v));
  const width = Array.from(table.box.upper, (v, j) => v - lower[j]);
  const tests = regionTests(table, 'float');
  // widened bounding box of every region (the points any of its row tests may accept)
  const boxes = table.regions.map((r, k) => {
    const s = 2.5 * Math.max(tol.inside, ...tests[k].slack);
    return regionBounds({ A: r.A, b: r.b.map((v) => v + s) }, n);
  });
  const absMax = Array.from(table.box.lower, (l, j) => Math.max(Math.abs(l), Math.abs(table.box.upper[j])));
  let best: GridIndex | null = null;
  // the finest grid within the budget, at most maxCells cells and 16 per region (finer cells only cost memory)
  for (let G = 2; G ** n <= Math.min(maxCells, Math.max(16 * R, 2 ** n)); G++) {
    const cells = new Array<number>(n).fill(G);
    const scale = width.map((w) => Math.fround(G / w));
    const delta = lower.map((lo, j) => 4 * U * (Math.abs(lo) + absMax[j] + width[j]));
    // per region the cell range per coordinate
    const ranges = boxes.map((bx) =>
      cells.map((g, j) => {
        // cell k covers [lo + k/s − δ, lo + (k+1)/s + δ] (outer cells unbounded outward)
        const from = Math.min(g - 1, Math.max(0, Math.floor((bx[2 * j] - delta[j] - lower[j]) * scale[j]) - 1));
        const to = Math.max(from, Math.min(g - 1, Math.floor((bx[2 * j + 1] + delta[j] - lower[j]) * scale[j]) + 1));
        let a = from;
        let b = to;
        // tighten with the exact test (the ±1 above only guards the floor against rounding)
        while (a < b && !(a === 0 || lower[j] + (a + 1) / scale[j] + delta[j] >= bx[2 * j])) a++;
        while (b > a && !(b === g - 1 || lower[j] + b / scale[j] - delta[j] <= bx[2 * j + 1])) b--;
        return [a, b];
      }),
    );
    let copies = 0;
    for (const rg of ranges) copies += rg.reduce((acc, [a, b]) => acc * (b - a + 1), 1);
    // the cell lists, regions in ascending index: their lengths first (the bytes need the empty cells)
    const m = G ** n;
    const count = new Array<number>(m + 1).fill(0);
    const visit = (rg: number[][], f: (cell: number) => void) => {
      const idx = rg.map(([a]) => a);
      for (;;) {
        let cell = 0;
        for (let j = 0; j < n; j++) cell = cell * cells[j] + idx[j];
        f(cell);
        let j = n - 1;
        while (j >= 0 && idx[j] === rg[j][1]) {
          idx[j] = rg[j][0];
          j--;
        }
        if (j < 0) return;
        idx[j]++;
      }
    };
    ranges.forEach((rg) => visit(rg, (c) => count[c + 1]++));
    let nonEmpty = 0;
    for (let c = 1; c <= m; c++) if (count[c] > 0) nonEmpty++;
    if (gridBytes(cells, copies, R, nonEmpty) > options.maxBytes) break;
    for (let c = 0; c < m; c++) count[c + 1] += count[c];
    const leafStart = count.slice();
    const fillAt = count.slice(0, m);
    const leafRegions = new Array<number>(copies);
    ranges.forEach((rg, k) => visit(rg, (c) => (leafRegions[fillAt[c]++] = k)));
    let maxLeafSize = 0;
    let maxLeafRows = 0;
    for (let c = 0; c < m; c++) {
      maxLeafSize = Math.max(maxLeafSize, leafStart[c + 1] - leafStart[c]);
      let rows = 0;
      for (let k = leafStart[c]; k < leafStart[c + 1]; k++) rows += table.regions[leafRegions[k]].A.length;
      maxLeafRows = Math.max(maxLeafRows, rows);
    }
    const grid: GridIndex = {
      format: GRID_FORMAT,
      ntheta: n,
      regionCount: R,
      cells,
      lower,
      scale,
      leafStart,
      leafRegions,
      delta,
      stats: { nodes: 0, leaves: m, maxDepth: 0, maxLeafSize, maxLeafRows, copies, buildSeconds: 0 },
    };
    best = grid;
  }
  if (best) best.stats.buildSeconds = (Date.now() - t0) / 1000;
  return best;
}

/** The cell the generated code computes for θ (already rounded to the build's precision). */
export function gridCell(g: Pick<GridIndex, 'cells' | 'lower' | 'scale'>, theta: ArrayLike<number>, float: boolean): number {
  let cell = 0;
  for (let j = 0; j < g.cells.length; j++) {
    const q = float ? Math.fround(Math.fround(theta[j] - g.lower[j]) * g.scale[j]) : (theta[j] - g.lower[j]) * g.scale[j];
    const c = !(q >= 0) ? 0 : q >= g.cells[j] ? g.cells[j] - 1 : Math.trunc(q);
    cell = cell * g.cells[j] + c;
  }
  return cell;
}

/**
 * Cells of a float grid build that lie deep inside their first candidate: 1 when every θ the
 * generated code can map into the cell passes every row of that region R with a residual at or
 * below the early exit of best fit, so the scan would stop at R with R as the answer and the
 * generated code may take R without testing it. Proof: a θ mapped into an inner cell lies in the
 * cell's box widened by δ_j (see above; outer cells reach to ∓∞ and are never sure, nor is NaN,
 * which maps to the first cell); the largest exact residual of row i over that box is
 * Σ_j max(a_ij lo_j, a_ij hi_j) − b_i, summed in double (its rounding is covered by the margin
 * below); the float residual is within ε_i < S_R of the exact one (regionTests; S_R the region's
 * slack), so when the exact maximum is ≤ fitSure − S_R − m (m = 1e-9·(Σ_j|a_ij|·max(|lo_j|,|hi_j|)
 * + |b_i|), far above the double sum's rounding) every row of R passes with ρ̂ ≤ fitSure: R, tested
 * first, is taken and ends the scan. Empty cells and double builds (first fit) have no sure cells.
 */
export function gridSureCells(table: TableFile, ar: Pick<EmitArrays, 'leafStart' | 'leafRegion' | 'regionSlack' | 'fitSure' | 'bestFit'>, grid: Pick<GridIndex, 'cells' | 'lower' | 'scale' | 'delta'>): number[] {
  const n = grid.cells.length;
  const m = grid.cells.reduce((a, b) => a * b, 1);
  const out = new Array<number>(m).fill(0);
  if (!ar.bestFit) return out;
  const idx = new Array<number>(n);
  const lo = new Array<number>(n);
  const hi = new Array<number>(n);
  for (let cell = 0; cell < m; cell++) {
    if (ar.leafStart[cell + 1] === ar.leafStart[cell]) continue;
    let c = cell;
    let inner = true;
    for (let j = n - 1; j >= 0; j--) {
      idx[j] = c % grid.cells[j];
      c = Math.floor(c / grid.cells[j]);
      if (idx[j] === 0 || idx[j] === grid.cells[j] - 1) inner = false;
    }
    if (!inner) continue;
    for (let j = 0; j < n; j++) {
      lo[j] = grid.lower[j] + idx[j] / grid.scale[j] - grid.delta[j];
      hi[j] = grid.lower[j] + (idx[j] + 1) / grid.scale[j] + grid.delta[j];
    }
    const r = ar.leafRegion[ar.leafStart[cell]];
    const region = table.regions[r];
    const limit = ar.fitSure - ar.regionSlack[r];
    let deep = true;
    for (let i = 0; i < region.A.length && deep; i++) {
      const a = region.A[i];
      let s = -region.b[i];
      let mag = Math.abs(region.b[i]);
      for (let j = 0; j < n; j++) {
        s += Math.max(a[j] * lo[j], a[j] * hi[j]);
        mag += Math.abs(a[j]) * Math.max(Math.abs(lo[j]), Math.abs(hi[j]));
      }
      if (!(s + 1e-9 * mag <= limit)) deep = false;
    }
    if (deep) out[cell] = 1;
  }
  return out;
}
