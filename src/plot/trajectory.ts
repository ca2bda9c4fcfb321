/**
 * Closed loop of the plant under the table law for map trajectories: the simulate engine
 * (src/check/simulate.ts) started from a full θ, r and d held, stopping when θ leaves every
 * region (the controller would have no law).
 */
import type { TableFile } from '../table/format.js';
import { InputError } from '../io/input-error.js';
import { plantOf, simulateFromTheta } from '../check/simulate.js';
import type { Trajectory } from './svg.js';

/** The plant of a problem: A, B (C, Bd, Cd when it has them; C defaults to the identity). */
export interface PlantModel {
  A: number[][];
  B: number[][];
  C?: number[][];
  Bd?: number[][] | null;
  Cd?: number[][] | null;
}

/**
 * Closed loop from `theta0` (nθ entries, θ units) for at most `steps` sampling periods under the
 * table law; stops early when θ leaves every region. Returns new θ vectors, first the start.
 */
export function simulateClosedLoop(table: TableFile, plant: PlantModel, theta0: number[], steps: number): Trajectory {
  const C = plant.C ?? plant.A.map((row, i) => row.map((_, j) => (i === j ? 1 : 0)));
  const run = simulateFromTheta(
    { table, nominal: plantOf({ ...plant, C }), limits: {}, names: { states: [], inputs: [], outputs: [] }, steps, outside: 'stop' },
    0,
    theta0,
  );
  const points = run.records.map((r) => r.theta);
  if (run.ended === 'steps') points.push(nextTheta(run, table));
  return { points, end: run.ended };
}

/** θ after the last step: the final state, the last input as u_prev, r and d as held. */
function nextTheta(run: ReturnType<typeof simulateFromTheta>, table: TableFile): number[] {
  const last = run.records[run.records.length - 1];
  const th = last ? last.theta.slice() : [];
  for (const b of table.layout.theta) {
    for (let i = 0; i < b.size; i++) {
      if (b.kind === 'state') th[b.offset + i] = run.final.x[b.refersTo[i]];
      else if (b.kind === 'inputPrev') th[b.offset + i] = last.u[b.refersTo[i]];
    }
  }
  return th;
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
