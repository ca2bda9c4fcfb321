/**
 * Single-precision certificate against the classical rounding-error bound of an inner product
 * (Higham, "Accuracy and Stability of Numerical Algorithms", 2nd ed., §3.1, from memory):
 * |fl(g + Σ f_j θ_j) − (g + Σ f_j θ_j)| ≤ γ_{n+1} (|g| + Σ |f_j||θ_j|), γ_k = k·u/(1 − k·u),
 * u = 2⁻²⁴, plus the rounding of θ and of the coefficients to float (each ≤ u relative).
 */
import { describe, expect, it } from 'vitest';
import { certifyFloat } from '../../src/check/certify.js';
import { buildArrays } from '../../src/emit/arrays.js';
import { treeForTable } from '../../src/emit/index.js';
import { gridTable } from './synthetic.js';

const U = 2 ** -24;
const gamma = (k: number) => (k * U) / (1 - k * U);

describe('float certificate', () => {
  for (const [label, scale] of [
    ['moderate coefficients', 1],
    ['large coefficients', 1e4],
  ] as const)
    it(`${label}: max |u_float − u_double| is positive and within the inner-product bound`, () => {
      const table = gridTable(4, (i, j) => ({ F: [[0.3 * scale * (i + 1), -0.7 * scale * (j + 1)]], g: [0.1 * scale * (i - j)] }));
      const tree = treeForTable(table);
      const cert = certifyFloat(table, buildArrays(table, 'float', 'tree', tree), { samples: 5000, seed: 3, tolerance: 1e-5 });
      // |θ| ≤ 4 on the grid [0,4]²; coefficients at most scale·(0.3·4, 0.7·4, 0.1·3)
      const sumAbs = scale * (0.3 * 4 * 4 + 0.7 * 4 * 4 + 0.1 * 3);
      // inner product with n = 2 terms plus g, then each input rounded (θ, f, g): 2u more per term
      const bound = gamma(3) * sumAbs + 2 * U * sumAbs + U * sumAbs;
      expect(cert.maxAbsDiff).toBeGreaterThan(0);
      expect(cert.maxAbsDiff).toBeLessThanOrEqual(bound);
      expect(cert.lostInFloat).toBe(0);
      // the verdict follows the stated tolerance: large coefficients push the error past 1e-5
      expect(cert.safe).toBe(scale === 1);
      expect(cert.verdict.startsWith(scale === 1 ? 'SAFE' : 'NOT SAFE')).toBe(true);
      expect(cert.points.facet).toBe(16 * 4 * 6);
    });
});
