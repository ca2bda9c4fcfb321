/**
 * Saturation of u(0) to the nominal input limits of a table (`inputLimits`). A law evaluated on its
 * own region meets the limits only up to rounding (−1.0000000000000016 for a −1 limit); firmware,
 * plots and simulations that need the hard limit exactly clamp with this one helper, so that they
 * all clamp the same way.
 */
import type { TableFile } from './format.js';

export type InputLimits = TableFile['inputLimits'];

/** u clamped into [lower, upper] component-wise; a null bound leaves that side open. NaN stays NaN. */
export function clampInputs(u: ArrayLike<number>, limits: InputLimits): number[] {
  const out = Array.from(u);
  for (let i = 0; i < out.length; i++) {
    const lo = limits.lower[i];
    const hi = limits.upper[i];
    if (lo !== null && lo !== undefined && out[i] < lo) out[i] = lo;
    if (hi !== null && hi !== undefined && out[i] > hi) out[i] = hi;
  }
  return out;
}

/** Finite bounds that a clamp compares against: its cost is one comparison (and at most one move) each. */
export function clampComparisons(limits: InputLimits, nu: number): number {
  let k = 0;
  for (let i = 0; i < nu; i++) {
    if (limits.lower[i] !== null && limits.lower[i] !== undefined) k++;
    if (limits.upper[i] !== null && limits.upper[i] !== undefined) k++;
  }
  return k;
}

/** True when at least one input has a finite limit (else a clamp does nothing). */
export function hasInputLimits(limits: InputLimits, nu: number): boolean {
  return clampComparisons(limits, nu) > 0;
}
