/**
 * The float overlap and its error bound (DEVELOPERS.md, "Point location in float") on an analytic
 * case: u = k·|θ₀ − 1| on [0,2]² (four unit cells, continuous, law jump 2k across θ₀ = 1).
 * References: the inner-product rounding bound |fl(Σ x_j y_j) − Σ x_j y_j| ≤ γ_n Σ|x_j y_j|,
 * γ_n = n·u/(1 − n·u), u = 2⁻²⁴ (Higham, Accuracy and Stability of Numerical Algorithms, §3.1,
 * from memory), and the identity u_R − u_N = δ·(a·θ − b) for continuous affine pieces sharing
 * the facet a·θ = b (|a| = 1), here δ = 2k by hand.
 */
import { describe, expect, it } from 'vitest';
import { buildArrays, evaluateArrays } from '../../src/emit/arrays.js';
import { floatBounds } from '../../src/check/certify.js';
import { buildLocator } from '../../src/emit/choose.js';
import { applyAffine, locateSequential } from '../../src/table/table.js';
import { seededRandom } from '../../src/emit/sample.js';
import { tol } from '../../src/tol.js';
import { gridTable } from './synthetic.js';

const U = 2 ** -24;
const K = 50;
const Y = 0.37;
const table = gridTable(2, (i) => (i === 0 ? { F: [[-K, Y]], g: [K] } : { F: [[K, Y]], g: [-K] }));

describe('float overlap on u = k·|θ₀ − 1| + 0.37·θ₁', () => {
  it('the overlap bound is |δ|·(S_R + S_N) = 2·slack·|δ| with δ = 2k and the slack of the derivation', () => {
    const b = floatBounds(table);
    // unit cell with centre (0.5, 0.5): extent W = 0.5 + 1e-6·2 per axis, bound b − a·c = 0.5,
    // e = (n + 2)·u·|a|·W + u·|b − a·c| + u·|a|·W (θ − c rounded), slack = 1.01·(tol.inside + e)
    const W = 0.5 + 2e-6;
    const slack = 1.01 * (tol.inside + 4 * U * W + U * 0.5 + U * W);
    expect(b.overlapAt!.jump).toBeCloseTo(2 * K, 12);
    // every cell has the same slack, so the best-fit window S_R + S_N is twice the slack
    // (each slack rounded up to a float: at most one float ulp, 2⁻²³ relative, above it)
    expect(b.overlapAt!.window).toBeGreaterThanOrEqual(2 * slack);
    expect(b.overlapAt!.window).toBeLessThanOrEqual(2 * slack * (1 + 2 ** -22));
    expect(b.overlap).toBeCloseTo(b.overlapAt!.window * 2 * K, 12);
    // θ's own rounding: u·Σ_j |F_j|·|θ_j|max = u·(k + 0.37)·2
    expect(b.inputRounding).toBeCloseTo(U * (K + Y) * 2, 18);
  });

  for (const search of ['sequential', 'boxtree', 'capped', 'broad'] as const)
    it(`${search}: float points within 64 ulps of θ₀ = 1 are never lost, and their error stays within overlap + rounding (best fit, and first fit where the overlap is used)`, () => {
      const best = buildArrays(table, 'float', search, buildLocator(table, search));
      // first fit takes the lower-index region wherever its slack reaches: the overlap in full
      const first = { ...best, bestFit: false };
      const bound = floatBounds(table).overlap;
      const rnd = seededRandom(12);
      let relocated = 0;
      let worst = 0;
      for (let i = 0; i < 20000; i++) {
        const x = Math.fround(1 + (Math.floor(rnd() * 129) - 64) * 2 ** -23);
        const y = Math.fround(0.05 + 1.9 * rnd());
        const th = [x, y];
        const rd = locateSequential(table.regions, th);
        expect(rd).toBeGreaterThanOrEqual(0);
        const ud = applyAffine(table.regions[rd].law, th)[0];
        for (const ar of [best, first]) {
          const ef = evaluateArrays(ar, th);
          expect(ef.region).toBeGreaterThanOrEqual(0); // no point lost
          // arithmetic of the centred law g' + F·(θ − c), |θ − c| ≤ (0.51, 0.5), three terms:
          // γ_3·(|g'| + |F₀|·0.51 + |F₁|·0.5) with |g'| ≤ k/2 + Y·1.5
          const arith = ((3 * U) / (1 - 3 * U)) * (K / 2 + Y * 1.5 + K * 0.51 + Y * 0.5);
          const err = Math.abs(ef.u![0] - ud);
          worst = Math.max(worst, err);
          expect(err).toBeLessThanOrEqual(bound + arith);
          // a point of the right column placed in the left one (cells 0, 2 are i = 0)
          if (ef.region % 2 !== rd % 2) relocated++;
        }
      }
      // the bound is not vacuous: some points do cross into the neighbour, and carry an error
      expect(relocated).toBeGreaterThan(0);
      expect(worst).toBeGreaterThan(0);
    }, 60000);
});
