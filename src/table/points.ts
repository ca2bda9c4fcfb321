/** Points in, evaluations out: the text formats of `tessera evaluate`, pure (the caller reads files). */
import { InputError } from '../io/input-error.js';
import { evaluateTable } from './table.js';
import type { TableFile } from './format.js';

/**
 * Parse a points CSV: one θ per line (nθ comma-separated finite numbers, in the table's θ units and
 * order), blank lines and `#` comments skipped, an optional first line of names. `file` names the
 * source in errors. Returns fresh arrays the caller owns.
 */
export function parsePointsCsv(text: string, file: string, ntheta: number): number[][] {
  const lines = text.split(/\r?\n/).map((l) => l.trim());
  const points: number[][] = [];
  let first = true;
  lines.forEach((line, i) => {
    if (line === '' || line.startsWith('#')) return;
    const cells = line.split(',').map((c) => c.trim());
    const nums = cells.map(Number);
    if (first) {
      first = false;
      // a header is a line of names: no cell of it reads as a number
      if (cells.every((c, k) => c === '' || Number.isNaN(nums[k]))) {
        if (cells.length !== ntheta) throw new InputError(file, `line ${i + 1}`, `header has ${cells.length} names, θ has ${ntheta} entries`);
        return;
      }
    }
    if (cells.length !== ntheta) throw new InputError(file, `line ${i + 1}`, `expected ${ntheta} values (θ has ${ntheta} entries), got ${cells.length}`);
    nums.forEach((v, k) => {
      if (cells[k] === '' || !Number.isFinite(v)) throw new InputError(file, `line ${i + 1}, column ${k + 1}`, `"${cells[k]}" is not a finite number`);
    });
    points.push(nums);
  });
  return points;
}

/** One evaluated point: θ as given, the region index (−1 = none) and u(0) (null when none). */
export interface PointEvaluation {
  theta: number[];
  region: number;
  u: number[] | null;
}

/** Evaluate the table law at each θ (sequential location, table tolerance). Each θ has nθ entries. */
export function evaluatePoints(table: TableFile, points: number[][]): PointEvaluation[] {
  return points.map((p) => {
    const e = evaluateTable(table, p);
    return { theta: p, region: e.region, u: e.u };
  });
}

/** Shortest decimal that reads back as the same double. */
const num = (v: number): string => String(v);

/** CSV of evaluations: header θ names, `region`, input names; empty u cells where no region holds θ. */
export function evaluationCsv(table: TableFile, points: number[][]): string {
  const header = [...table.thetaNames, 'region', ...table.inputNames].join(',');
  const rows = evaluatePoints(table, points).map((e) => {
    const u = e.u ? e.u.map(num) : table.inputNames.map(() => '');
    return [...e.theta.map(num), String(e.region), ...u].join(',');
  });
  return [header, ...rows].join('\n') + '\n';
}
