import { mathjs } from './mathjs.js';
import type { Mat } from './dense.js';

/**
 * Zero-order-hold discretisation: exp([[A, B], [0, 0]]·T) = [[A_d, B_d], [0, I]]
 * (the block-exponential identity; common practice). Uses mathjs `expm` (Padé with scaling and squaring).
 */
export function discretiseZoh(A: number[][], B: number[][], T: number): { A: number[][]; B: number[][] } {
  const n = A.length;
  const m = B[0]?.length ?? 0;
  const size = n + m;
  const M: Mat = Array.from({ length: size }, () => new Array<number>(size).fill(0));
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) M[i][j] = A[i][j] * T;
    for (let j = 0; j < m; j++) M[i][n + j] = B[i][j] * T;
  }
  const { expm, matrix } = mathjs();
  const E = expm(matrix(M)).toArray() as number[][];
  return {
    A: E.slice(0, n).map((row) => row.slice(0, n)),
    B: E.slice(0, n).map((row) => row.slice(n, size)),
  };
}
