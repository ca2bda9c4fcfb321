/**
 * Single-precision certificate against the classical rounding-error bound of an inner product
 * (Higham, "Accuracy and Stability of Numerical Algorithms", 2nd ed., §3.1, from memory):
 * |fl(g + Σ f_j θ_j) − (g + Σ f_j θ_j)| ≤ γ_{n+1} (|g| + Σ |f_j||θ_j|), γ_k = k·u/(1 − k·u),
 * u = 2⁻²⁴, plus the rounding of θ and of the coefficients to float (each ≤ u relative); the law
 * jump across θ₀ = 1 of u = k·|θ₀ − 1| is 2k (by hand).
 */
import { describe, expect, it } from 'vitest';
import { certifyBuild, certifyFloat } from '../../src/check/certify.js';
import { buildArrays, evaluateArrays } from '../../src/emit/arrays.js';
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
      // 6 points per facet; the laws of neighbouring cells differ on every shared side (a jump of
      // 0.3·scale·θ₀ + 0.1·scale across a vertical side, by hand), so the 48 shared sides (counted
      // from both cells) are reported as discontinuous and get no rounding-window points
      expect(cert.points.facet).toBe(16 * 4 * 6);
      expect(cert.bounds.discontinuous.count).toBe(48);
      expect(cert.bounds.overlapAt).toBeNull();
      if (scale !== 1) {
        // a table that float cannot carry: the diagnosis names the region and its law, the
        // condition number and what to change (cancellation inside one law, the law's own rounding)
        expect(cert.diagnosis).toMatch(/the double law is region \d+'s \(gain Σ\|F\| = [0-9.e+]+, condition number Σ\|F θ\| \+ \|g\| over \|u\| = [0-9.e+]+\)/);
        expect(cert.diagnosis).toMatch(/what to change: /);
      } else expect(cert.diagnosis).toBeNull();
    });

  it('a build that relocates across a facet: the diagnosis names both regions, the facet and the law jump', () => {
    // u = k·|θ₀ − 1| on the 2×2 grid [0,2]²: the laws of the two columns differ by |δ| = 2k = 2e5.
    // First fit (a lower-index region wins wherever its slack reaches) moves points of the right
    // column into the left one by up to the slack, which carries |δ|·slack ≈ 2e5·1.6e-7 > 1e-3.
    const k = 1e5;
    const table = gridTable(2, (i) => (i === 0 ? { F: [[-k, 0]], g: [k] } : { F: [[k, 0]], g: [-k] }));
    const first = { ...buildArrays(table, 'float', 'sequential', null), bestFit: false };
    const near = Array.from({ length: 200 }, (_, q) => [1 + (q - 100) * 2 ** -24, 0.3 + q * 0.007]);
    const cert = certifyBuild(table, first, (t) => evaluateArrays(first, t), { samples: 500, tolerance: 1e-3, extraPoints: near });
    expect(cert.safe).toBe(false);
    expect(cert.relocated).toBeGreaterThan(0);
    expect(cert.diagnosis).toMatch(/the float build located it in region \d+, [0-9.e+-]+ beyond its facet \d+ \(overlap slack [0-9.e+-]+\); the laws of \d+ and \d+ differ by \|δ\| = 2\.000e\+5 across it/);
    expect(cert.diagnosis).toMatch(/what to change: /);
    // best fit on the same points: the neighbour is taken only within the rounding of the residuals
    const best = buildArrays(table, 'float', 'sequential', null);
    const certBest = certifyBuild(table, best, (t) => evaluateArrays(best, t), { samples: 500, tolerance: 1e-3, extraPoints: near });
    expect(certBest.relocatedMaxLawDiff).toBeLessThanOrEqual(certBest.bounds.overlap);
    expect(certBest.relocatedMaxLawDiff).toBeLessThan(cert.relocatedMaxLawDiff);
  });
});
