/** Points in, evaluations out: the text formats of `tessera evaluate`, pure (the caller reads files). */
import { InputError } from '../io/input-error.js';
import { applyAffine, evaluateTable } from './table.js';
import type { TableFile } from './format.js';
import { clampInputs } from './clamp.js';

/**
 * Match a header line to the θ names (contract, `tessera evaluate`): every θ entry named exactly
 * once, in any order. Returns, for each θ entry, the column that holds it.
 */
function headerColumns(path: string, line: number, cells: string[], names: string[]): number[] {
  const key = `line ${line}`;
  const list = names.join(', ');
  const seen = new Map<string, number>();
  cells.forEach((c, k) => {
    if (!names.includes(c)) throw new InputError(path, key, `unknown column "${c}" in the header (θ is ${list})`);
    if (seen.has(c)) throw new InputError(path, key, `column "${c}" named twice in the header (columns ${seen.get(c)! + 1} and ${k + 1})`);
    seen.set(c, k);
  });
  const missing = names.filter((n) => !seen.has(n));
  if (missing.length) throw new InputError(path, key, `header lacks ${missing.map((n) => `"${n}"`).join(', ')} (θ is ${list})`);
  return names.map((n) => seen.get(n)!);
}

/**
 * Parse the points CSV: one θ per line, comma-separated, an optional header line of names. With a
 * header the columns are matched by name (any order); without one they are θ in table order.
 * Points are returned in θ order, as fresh arrays the caller owns; `path` names the source in errors.
 */
export function parsePointsCsv(text: string, path: string, thetaNames: string[]): number[][] {
  const ntheta = thetaNames.length;
  const lines = text.split(/\r?\n/).map((l) => l.trim());
  const points: number[][] = [];
  let first = true;
  let order: number[] | null = null;
  lines.forEach((line, i) => {
    if (line === '' || line.startsWith('#')) return;
    const cells = line.split(',').map((c) => c.trim());
    const nums = cells.map(Number);
    if (first) {
      first = false;
      // a header is a line of names: no cell of it reads as a number
      if (cells.every((c, k) => c === '' || Number.isNaN(nums[k]))) {
        order = headerColumns(path, i + 1, cells, thetaNames);
        return;
      }
    }
    if (cells.length !== ntheta) throw new InputError(path, `line ${i + 1}`, `expected ${ntheta} values (θ has ${ntheta} entries), got ${cells.length}`);
    nums.forEach((v, k) => {
      if (cells[k] === '' || !Number.isFinite(v)) throw new InputError(path, `line ${i + 1}, column ${k + 1}`, `"${cells[k]}" is not a finite number`);
    });
    points.push(order ? order.map((k) => nums[k]) : nums);
  });
  return points;
}

/** One evaluated point: θ as given, the region index (−1 = none) and u(0) (null when none). */
export interface PointEvaluation {
  theta: number[];
  region: number;
  u: number[] | null;
  /**
   * only for tables with soft limits: the slack values at θ by name (null in no region, in a
   * merged region, whose stored moves are exact on one member only, and everywhere in a lean
   * table, which keeps no moves)
   */
  slacks?: Record<string, number> | null;
}

/** How `evaluatePoints` treats u(0). */
export interface EvaluateOptions {
  /** saturate u(0) to the table's `inputLimits` (`clampInputs`); slack values are never clamped */
  clamp?: boolean;
}

/**
 * Evaluate the table law at each θ (`evaluateTable`: table tolerance, a region holding θ exactly
 * first). Each θ has nθ entries in the table's units and `thetaNames` order; `theta` of each
 * result is the caller's array, `u` (nu entries, `inputNames` order) and `slacks` are new.
 */
export function evaluatePoints(table: TableFile, points: number[][], options: EvaluateOptions = {}): PointEvaluation[] {
  // slack values: the z entries of the layout's slack blocks, from the region's stored moves
  const slackBlocks = (table.layout?.z ?? []).filter((b) => b.kind === 'stateSlack' || b.kind === 'outputSlack');
  return points.map((p) => {
    const e = evaluateTable(table, p);
    if (e.u && options.clamp) e.u = clampInputs(e.u, table.inputLimits);
    if (slackBlocks.length === 0) return { theta: p, region: e.region, u: e.u };
    const merged = e.region >= 0 && ((table.regions[e.region] as { mergedFrom?: number[] }).mergedFrom?.length ?? 1) > 1;
    const moves = e.region < 0 ? undefined : table.regions[e.region].moves;
    const slacks: Record<string, number> | null = !moves || merged ? null : {};
    if (slacks && moves) {
      for (const b of slackBlocks) b.names.forEach((nm, i) => (slacks[nm] = applyAffine({ F: [moves.F[b.offset + i]], g: [moves.g[b.offset + i]] }, p)[0]));
    }
    return { theta: p, region: e.region, u: e.u, slacks };
  });
}

/** Shortest decimal that reads back as the same double. */
const num = (v: number): string => String(v);

/**
 * CSV of evaluations (what `tessera evaluate` prints): header θ names, `region`, input names, one
 * line per point with every number in its shortest round-trip decimal; empty u cells where no
 * region holds θ. `options.clamp` as in `evaluatePoints`.
 */
export function evaluationCsv(table: TableFile, points: number[][], options: EvaluateOptions = {}): string {
  const header = [...table.thetaNames, 'region', ...table.inputNames].join(',');
  const rows = evaluatePoints(table, points, options).map((e) => {
    const u = e.u ? e.u.map(num) : table.inputNames.map(() => '');
    return [...e.theta.map(num), String(e.region), ...u].join(',');
  });
  return [header, ...rows].join('\n') + '\n';
}
