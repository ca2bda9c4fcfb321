/** Region rows packed region after region in flat typed arrays: the residual test both table locators share. */
/**
 * Largest residual max_i(a_i·θ − b_i) of region r in rows packed region after region (row i of the
 * table at A[i·n … i·n + n − 1], region r's rows rowStart[r] … rowStart[r + 1] − 1); Σ a_j θ_j first,
 * then − b, the rounding of the sequential scan. Stops at the first row above `limit` and returns
 * that row's residual; NaN θ gives +Infinity, a region without rows −Infinity.
 */
export function packedViolation(A: ArrayLike<number>, b: ArrayLike<number>, rowStart: ArrayLike<number>, n: number, r: number, theta: ArrayLike<number>, limit: number = Infinity): number {
  let worst = -Infinity;
  for (let i = rowStart[r], e = rowStart[r + 1]; i < e; i++) {
    let s = 0;
    const o = i * n;
    for (let j = 0; j < n; j++) s += A[o + j] * theta[j];
    const v = s - b[i];
    if (!(v <= limit)) return Number.isNaN(v) ? Infinity : v;
    if (v > worst) worst = v;
  }
  return worst;
}
