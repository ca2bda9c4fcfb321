import { lpMaximizeReference } from '../../src/lp/reference.js';

/**
 * The bounding box of {θ : Aθ ≤ b} by javascript-lp-solver (an npm simplex, through the thin
 * adapter lpMaximizeReference): max and min of each coordinate; `optimal` is false when any of
 * the 2n LPs is not solved to optimality.
 */
export function referenceBox(A: number[][], b: number[]): { lo: number[]; hi: number[]; optimal: boolean } {
  const m = b.length;
  const n = A[0].length;
  const flat = Float64Array.from(A.flat());
  const lo: number[] = [];
  const hi: number[] = [];
  let optimal = true;
  for (let j = 0; j < n; j++) {
    const c = new Float64Array(n);
    c[j] = 1;
    const up = lpMaximizeReference(c, flat, b, m, n);
    c[j] = -1;
    const dn = lpMaximizeReference(c, flat, b, m, n);
    optimal &&= up.status === 'optimal' && dn.status === 'optimal';
    hi.push(up.value);
    lo.push(-dn.value);
  }
  return { lo, hi, optimal };
}
