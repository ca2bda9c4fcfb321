/**
 * Closed loop of the plant under the table law: θ = [x; u_prev], u = table law at θ,
 * x⁺ = A x + B u, u_prev⁺ = u. Stops when θ leaves every region (the controller would have no law).
 */
import type { TableFile } from '../table/format.js';
import { evaluateTable } from '../table/table.js';
import type { Trajectory } from './svg.js';

export interface PlantModel {
  A: number[][];
  B: number[][];
  /** θ carries u_prev after x */
  hasRate: boolean;
}

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
