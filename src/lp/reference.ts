import solverModule from 'javascript-lp-solver';
import type { LpResult } from './kernel.js';

// The package's declarations are typed as CommonJS while Node and bundlers load its ES build, whose
// default export is the solver itself; the small interface below is all this adapter uses.
interface LpSolver {
  Solve(model: unknown): Record<string, number> & { feasible: boolean; bounded?: boolean; result: number };
}
const solver = ((solverModule as unknown as { default?: LpSolver }).default ?? solverModule) as unknown as LpSolver;

/**
 * The reference LP: the same contract as lpMaximize (maximise cᵀx, A x ≤ b, x free) solved by
 * javascript-lp-solver. Its variables are non-negative, so x = x⁺ − x⁻. Used to check the
 * kernel in tests and selectable on the hot path (`lp: 'reference'`).
 */
export function lpMaximizeReference(c: ArrayLike<number>, A: ArrayLike<number>, b: ArrayLike<number>, m: number, n: number): LpResult {
  const constraints: Record<string, { max: number }> = {};
  const variables: Record<string, Record<string, number>> = {};
  for (let i = 0; i < m; i++) constraints[`r${i}`] = { max: b[i] };
  for (let j = 0; j < n; j++) {
    const vp: Record<string, number> = { obj: c[j] };
    const vm: Record<string, number> = { obj: -c[j] };
    for (let i = 0; i < m; i++) {
      const a = A[i * n + j];
      if (a !== 0) {
        vp[`r${i}`] = a;
        vm[`r${i}`] = -a;
      }
    }
    variables[`p${j}`] = vp;
    variables[`m${j}`] = vm;
  }
  const res = solver.Solve({ optimize: 'obj', opType: 'max', constraints, variables });
  const x = new Float64Array(n);
  for (let j = 0; j < n; j++) x[j] = (res[`p${j}`] ?? 0) - (res[`m${j}`] ?? 0);
  if (!res.feasible) return { status: 'infeasible', x, value: NaN, iterations: 0 };
  if (res.bounded === false || !Number.isFinite(res.result)) return { status: 'unbounded', x, value: Infinity, iterations: 0 };
  return { status: 'optimal', x, value: res.result, iterations: 0 };
}
