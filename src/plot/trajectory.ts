/**
 * Closed loop of the nominal plant under the table law, with θ's layout read from the table:
 * u = table law at θ, x⁺ = A x + B u (+ Bd d); the state block of θ takes x⁺, the previous-input
 * block takes u, the reference and disturbance blocks stay constant. Stops when θ leaves every
 * region (the controller would have no law).
 */
import type { TableFile } from '../table/format.js';
import { evaluateTable } from '../table/table.js';
import { thetaBlock } from '../formulation/layout.js';
import type { Trajectory } from './svg.js';

export interface PlantModel {
  A: number[][];
  B: number[][];
  /** n×nd disturbance input (discrete time), null without a disturbance */
  Bd: number[][] | null;
}

export function simulateClosedLoop(table: TableFile, plant: PlantModel, theta0: number[], steps: number): Trajectory {
  const xb = thetaBlock(table.layout, 'state');
  if (!xb) throw new Error('the table has no state block in θ: closed-loop trajectories need an MPC table');
  const ub = thetaBlock(table.layout, 'inputPrev');
  const db = thetaBlock(table.layout, 'disturbance');
  const points = [theta0.slice()];
  let th = theta0.slice();
  for (let k = 0; k < steps; k++) {
    const ev = evaluateTable(table, th);
    if (ev.region < 0 || !ev.u) return { points, end: 'outside' };
    const u = ev.u;
    const x = th.slice(xb.offset, xb.offset + xb.size);
    const d = db ? th.slice(db.offset, db.offset + db.size) : [];
    const next = th.slice();
    plant.A.forEach((row, i) => {
      let s = row.reduce((acc, a, j) => acc + a * x[j], 0) + plant.B[i].reduce((acc, b, j) => acc + b * u[j], 0);
      if (plant.Bd) s += plant.Bd[i].reduce((acc, b, j) => acc + b * d[j], 0);
      next[xb.offset + i] = s;
    });
    if (ub) for (let j = 0; j < ub.size; j++) next[ub.offset + j] = u[j];
    th = next;
    points.push(th.slice());
  }
  return { points, end: evaluateTable(table, th).region < 0 ? 'outside' : 'steps' };
}
