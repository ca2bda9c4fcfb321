/**
 * Closed loop of the plant under the table law: θ = [x; u_prev], u = table law at θ,
 * x⁺ = A x + B u, u_prev⁺ = u. Stops when θ leaves every region (the controller would have no law).
 */
import type { TableFile } from '../table/format.js';
import { evaluateTable } from '../table/table.js';
import { InputError } from '../io/input-error.js';
import type { Trajectory } from './svg.js';

export interface PlantModel {
  A: number[][];
  B: number[][];
  /** θ carries u_prev after x */
  hasRate: boolean;
}

/**
 * Closed loop from `theta0` (nθ entries, θ units) for at most `steps` sampling periods under the
 * table law; stops early when θ leaves every region. Returns new θ vectors, first the start.
 */
export function simulateClosedLoop(table: TableFile, plant: PlantModel, theta0: number[], steps: number): Trajectory {
  const n = plant.A.length;
  const m = plant.B[0]?.length ?? 0;
  const points = [theta0.slice()];
  let th = theta0.slice();
  for (let k = 0; k < steps; k++) {
    const ev = evaluateTable(table, th);
    if (ev.region < 0 || !ev.u) return { points, end: 'outside' };
    const x = th.slice(0, n);
    const xn = plant.A.map((row, i) => row.reduce((s, a, j) => s + a * x[j], 0) + plant.B[i].reduce((s, b, j) => s + b * ev.u![j], 0));
    th = plant.hasRate ? xn.concat(ev.u.slice(0, m)) : xn;
    points.push(th.slice());
  }
  return { points, end: evaluateTable(table, th).region < 0 ? 'outside' : 'steps' };
}

/**
 * Parse initial states: CSV, one per line, either a full θ (nθ values) or (axis₁, axis₂) of a slice
 * (2 values); blank lines and `#` comments skipped, an optional header line. `file` names the source in errors.
 */
export function parseInitialStates(text: string, file: string, ntheta: number): number[][] {
  const rows: number[][] = [];
  text.split(/\r?\n/).forEach((line, i) => {
    const s = line.trim();
    if (!s || s.startsWith('#')) return;
    const cells = s.split(',').map((c) => c.trim());
    const nums = cells.map(Number);
    if (nums.some((x) => !Number.isFinite(x))) {
      if (rows.length === 0 && i === 0) return; // header
      throw new InputError(file, `line ${i + 1}`, `not a list of numbers: "${s}"`);
    }
    if (nums.length !== ntheta && nums.length !== 2)
      throw new InputError(file, `line ${i + 1}`, `expected ${ntheta} values (a full θ) or 2 (a point of the slice), got ${nums.length}`);
    rows.push(nums);
  });
  if (!rows.length) throw new InputError(file, '', 'no initial states found');
  return rows;
}
