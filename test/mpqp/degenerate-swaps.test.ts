import { describe, expect, it } from 'vitest';
import type { MpqpProblem } from '../../src/index.js';
import { swapGuesses } from '../../src/mpqp/canonical.js';

// The canonical form's swaps at a degenerate point (`swapGuesses`), on a small mpQP of our own whose
// row dependencies are known by construction (reference: the analytic relations written beside
// each row, not the project's code): z = (u0, u1, u2), one parameter θ.
//   row 0: u0 ≤ 1
//   row 1: u1 ≤ 1
//   row 2: u1 − u0 ≤ 0          G₂ = G₁ − G₀ and w₂ = w₁ − w₀: tight wherever rows 0 and 1 are
//   row 3: u2 ≤ 0.5 + θ
//   row 4: u2 − u1 ≤ θ + d      G₄ = G₃ − G₁; its slack where rows 1 and 3 are tight is
//                               (θ + d) − (0.5 + θ − 1) = d + 0.5: tight throughout for d = −0.5 only
function problem(d: number): MpqpProblem {
  return {
    nz: 3,
    ntheta: 1,
    lawSize: 3,
    nc: 5,
    H: Float64Array.of(1, 0, 0, 0, 2, 0, 0, 0, 1.5),
    F: Float64Array.of(-1, 0.5, -2),
    c: Float64Array.of(-3, -4, -1),
    Y: new Float64Array(1),
    G: Float64Array.of(1, 0, 0, 0, 1, 0, -1, 1, 0, 0, 0, 1, 0, -1, 1),
    w: Float64Array.of(1, 1, 0, 0.5, d),
    E: Float64Array.of(0, 0, 0, 1, 1),
    box: { lower: Float64Array.of(-1), upper: Float64Array.of(1) },
    labels: ['r0', 'r1', 'r2', 'r3', 'r4'],
    mergedFrom: [[0], [1], [2], [3], [4]],
    thetaNames: ['t'],
    lawNames: ['u0', 'u1', 'u2'],
  };
}

describe('swaps at a degenerate point (canonical form)', () => {
  it('a row dependent on the set and tight throughout gives one swap per row of its combination', () => {
    // {0, 1, 3}: row 2 = row 1 − row 0 is tight over the whole region → {1,2,3} (row 0 out), {0,2,3} (row 1 out);
    // row 4 = row 3 − row 1 has slack 0.5 everywhere → no swap
    expect(swapGuesses(problem(0), [0, 1, 3], [0.2])).toEqual([
      [1, 2, 3],
      [0, 2, 3],
    ]);
  });

  it('a dependent row slack by a constant is no swap; the same row made tight throughout is', () => {
    // d = −0.5: row 4 is tight wherever rows 1 and 3 are → {0,3,4} (row 1 out) and {0,1,4} (row 3 out) besides row 2's
    expect(swapGuesses(problem(-0.5), [0, 1, 3], [-0.4])).toEqual([
      [1, 2, 3],
      [0, 2, 3],
      [0, 3, 4],
      [0, 1, 4],
    ]);
    // d = −0.5 + 1e-3: slack 1e-3 over the region → row 4 drops out again
    expect(swapGuesses(problem(-0.5 + 1e-3), [0, 1, 3], [-0.4])).toEqual([
      [1, 2, 3],
      [0, 2, 3],
    ]);
  });

  it('rows independent of the set give no swap, whatever their slack', () => {
    // {0, 3}: row 1 (u1) is not in span(G₀, G₃); rows 2 and 4 involve u1 as well
    expect(swapGuesses(problem(-0.5), [0, 3], [0.1])).toEqual([]);
    // {1}: only row 1's own direction; rows 0, 2, 3, 4 all leave span(G₁)
    expect(swapGuesses(problem(0), [1], [0.1])).toEqual([]);
  });
});
