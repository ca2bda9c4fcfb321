/** Heat layers of a slice: u(0) of one input, or the optimal cost J*(θ). Shared by `tessera map` and the viewer. */
import { InputError } from '../io/input-error.js';
import type { QuadraticForm } from '../mpqp/types.js';
import { liftPoint, type SliceSpec } from '../partition/slice.js';
import type { TableFile } from '../table/format.js';
import { applyAffine } from '../table/table.js';
import { locateRegion } from '../table/locator.js';
import { tol } from '../tol.js';
import type { HeatLayer } from './svg.js';

/** J*(θ) = θᵀQθ + qᵀθ + r of one region's value function (θ with nθ entries, the table's units). */
export function quadraticAt(v: QuadraticForm, theta: ArrayLike<number>): number {
  let s = v.r;
  for (let i = 0; i < v.q.length; i++) {
    s += v.q[i] * theta[i];
    for (let j = 0; j < v.q.length; j++) s += theta[i] * v.Q[i][j] * theta[j];
  }
  return s;
}

/** True when some region of the table stands for several merged regions (its value function is then exact on one member only). */
export function isMergedTable(table: TableFile): boolean {
  return table.regions.some((r) => ((r as { mergedFrom?: number[] }).mergedFrom?.length ?? 1) > 1);
}

/** Why a lean table has no cost heat map (one line, shared by `tessera map` and the viewer). */
export const LEAN_NO_COST = 'a lean table keeps no value function J*(θ); draw the cost heat map from a table solved without --lean';

/**
 * Heat layer over a slice: `what` is an input name (u(0) of that input) or "cost" (optimal cost
 * J*(θ)). Values are in the table's units; points in no region give null. Throws InputError
 * (key "heat") for an unknown name, and for "cost" on a merged or a lean table.
 */
export function heatLayer(table: TableFile, spec: SliceSpec, what: string): HeatLayer {
  const ui = table.inputNames.indexOf(what);
  if (what !== 'cost' && ui < 0) throw new InputError(table.name, 'heat', `expected "cost" or an input name (${table.inputNames.join(', ')}), got "${what}"`);
  // a merged region keeps one member's value function, which is exact only on that member
  if (what === 'cost' && isMergedTable(table))
    throw new InputError(table.name, 'regions', 'a merged table holds u(0) laws only; draw the cost heat map from the unmerged table');
  if (what === 'cost' && table.lean) throw new InputError(table.name, 'lean', LEAN_NO_COST);
  return {
    label: what === 'cost' ? 'optimal cost J*(θ)' : `${what}(0)`,
    value: (x, y) => {
      const th = liftPoint(spec, x, y);
      const ri = locateRegion(table.regions, th, tol.inside, table.box);
      if (ri < 0) return null;
      return ui >= 0 ? applyAffine(table.regions[ri].law, th)[ui] : quadraticAt(table.regions[ri].value!, th);
    },
  };
}
