import type { MpqpProblem } from './types.js';
import { tol } from '../tol.js';
import { mergedRowLabel } from './labels.js';

/**
 * Condition the raw condensed mpQP for the engine:
 * 1. scale each row so that [G_i, −E_i] has unit norm (residuals then read as distances);
 * 2. merge rows that are the same after scaling (positive multiples of one another in
 *    [G −E w]): duplicated limits, an output row equal to a state row. A merged row stands for
 *    all of them, so LICQ is never lost to a copy of a row.
 * Rows with G_i = 0 and E_i = 0 are dropped when w_i ≥ 0 (always satisfied); when w_i < 0 they
 * are kept unscaled and make every θ infeasible.
 */
export function conditionMpqp(raw: MpqpProblem): MpqpProblem {
  const { nz, ntheta: nt, nc } = raw;
  const keep: number[] = [];
  const G: number[] = [];
  const E: number[] = [];
  const w: number[] = [];
  const labels: string[] = [];
  const labelGroups: string[][] = [];
  const mergedFrom: number[][] = [];
  const width = nz + nt;
  const rowsSeen: Float64Array[] = [];
  for (let i = 0; i < nc; i++) {
    let s = 0;
    for (let j = 0; j < nz; j++) s += raw.G[i * nz + j] ** 2;
    for (let j = 0; j < nt; j++) s += raw.E[i * nt + j] ** 2;
    const norm = Math.sqrt(s);
    const scale = norm > 1e-14 ? 1 / norm : 1;
    if (norm <= 1e-14 && raw.w[i] >= 0) continue;
    const row = new Float64Array(width + 1);
    for (let j = 0; j < nz; j++) row[j] = raw.G[i * nz + j] * scale;
    for (let j = 0; j < nt; j++) row[nz + j] = raw.E[i * nt + j] * scale;
    row[width] = raw.w[i] * scale;
    let dup = -1;
    for (let k = 0; k < rowsSeen.length && dup < 0; k++) {
      const o = rowsSeen[k];
      let same = true;
      for (let j = 0; j <= width && same; j++) if (Math.abs(o[j] - row[j]) > tol.primal * (1 + Math.abs(row[j]))) same = false;
      if (same) dup = k;
    }
    const origins = raw.mergedFrom[i] ?? [i];
    if (dup >= 0) {
      mergedFrom[dup].push(...origins);
      labelGroups[dup].push(raw.labels[i]);
      labels[dup] = mergedRowLabel(labelGroups[dup]);
      continue;
    }
    rowsSeen.push(row);
    keep.push(i);
    for (let j = 0; j < nz; j++) G.push(row[j]);
    for (let j = 0; j < nt; j++) E.push(row[nz + j]);
    w.push(row[width]);
    labels.push(raw.labels[i]);
    labelGroups.push([raw.labels[i]]);
    mergedFrom.push([...origins]);
  }
  return {
    ...raw,
    nc: keep.length,
    G: Float64Array.from(G),
    E: Float64Array.from(E),
    w: Float64Array.from(w),
    labels,
    mergedFrom,
  };
}
