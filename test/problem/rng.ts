import { seededRandom } from '../../src/emit/sample.js';

/** Seeded generator (mulberry32, the one the certificate uses) for reproducible random test data. */
export const rng = seededRandom;

export function randMat(r: () => number, rows: number, cols: number, s = 1): number[][] {
  return Array.from({ length: rows }, () => Array.from({ length: cols }, () => s * (2 * r() - 1)));
}

/** M Mᵀ + shift·I: a random symmetric PSD (PD when shift > 0) matrix. */
export function randSpd(r: () => number, n: number, shift: number): number[][] {
  const M = randMat(r, n, n);
  return M.map((row, i) => M.map((col, j) => row.reduce((s, v, l) => s + v * col[l], 0) + (i === j ? shift : 0)));
}
