/**
 * Eigenvalues of general real matrices (`eigenvalues`, the problem reader's stabilisability and
 * gain checks). References: the invariants of the characteristic polynomial (Vieta and Newton's
 * identities: Σλ = tr A, Σλ² = tr A², Πλ = det A; handbook formulas) with tr and det from the
 * matrix entries and mathjs's `det` (an outside library), and a closed form for 2×2 matrices
 * (λ = tr/2 ± √(tr²/4 − det); common practice).
 */
import { describe, expect, it } from 'vitest';
import * as math from 'mathjs';
import { eigenvalues, type Eigenvalue } from '../../src/problem/dense.js';
import { parseProblem } from '../../src/problem/index.js';
import { rng } from './rng.js';

/** Σλ, Σλ² (real parts; the imaginary parts cancel over conjugate pairs) and Πλ (complex product). */
function invariants(ev: Eigenvalue[]): { sum: number; sumSq: number; prodRe: number; prodIm: number; imSum: number } {
  let sum = 0;
  let sumSq = 0;
  let imSum = 0;
  let pr = 1;
  let pi = 0;
  for (const { re, im } of ev) {
    sum += re;
    imSum += im;
    sumSq += re * re - im * im;
    [pr, pi] = [pr * re - pi * im, pr * im + pi * re];
  }
  return { sum, sumSq, prodRe: pr, prodIm: pi, imSum };
}

function traceOf(A: number[][]): number {
  return A.reduce((s, row, i) => s + row[i], 0);
}

/** A plant matrix on which mathjs 15.2.0's eigs gives up ("The eigenvalues failed to converge"); found by a randomised campaign of our own. */
const SPIRAL = [
  [1.107, -0.605, -0.299],
  [-0.03, 0.627, -0.264],
  [0.717, -0.456, 1.032],
];

describe('eigenvalues of general real matrices', () => {
  it('the plant mathjs eigs cannot do: a complex pair and a real mode with tr, tr A², det and det(A − λI) = 0', () => {
    const ev = eigenvalues(SPIRAL);
    expect(ev).toHaveLength(3);
    const inv = invariants(ev);
    const A2 = math.multiply(SPIRAL, SPIRAL) as number[][];
    expect(inv.sum).toBeCloseTo(traceOf(SPIRAL), 12);
    expect(inv.sumSq).toBeCloseTo(traceOf(A2), 12);
    expect(inv.prodRe).toBeCloseTo(math.det(SPIRAL), 12);
    expect(Math.abs(inv.prodIm)).toBeLessThan(1e-12);
    expect(ev.filter((e) => e.im !== 0)).toHaveLength(2);
    // each eigenvalue is a root of det(A − λI) (mathjs on the complex matrix)
    for (const { re, im } of ev) {
      const M = SPIRAL.map((row, i) => row.map((a, j) => (i === j ? math.complex(a - re, -im) : math.complex(a, 0))));
      expect(math.abs(math.det(M as unknown as math.Matrix) as unknown as math.Complex) as unknown as number).toBeLessThan(1e-12);
    }
    // and mathjs itself still fails on it (if a later mathjs converges, this line says so)
    expect(() => math.eigs(SPIRAL, { eigenvectors: false })).toThrow(/failed to converge/);
  });

  it('2×2 matrices against the closed form', () => {
    const r = rng(20261205);
    for (let k = 0; k < 500; k++) {
      const A = [
        [2 * r() - 1, 2 * r() - 1],
        [2 * r() - 1, 2 * r() - 1],
      ];
      const t = A[0][0] + A[1][1];
      const d = A[0][0] * A[1][1] - A[0][1] * A[1][0];
      const disc = (t * t) / 4 - d;
      const ref =
        disc >= 0
          ? [
              { re: t / 2 - Math.sqrt(disc), im: 0 },
              { re: t / 2 + Math.sqrt(disc), im: 0 },
            ]
          : [
              { re: t / 2, im: -Math.sqrt(-disc) },
              { re: t / 2, im: Math.sqrt(-disc) },
            ];
      const got = eigenvalues(A).sort((a, b) => a.re - b.re || a.im - b.im);
      for (let i = 0; i < 2; i++) {
        // a double root is ill-conditioned: the error there grows like √(round-off)
        const slack = Math.abs(disc) < 1e-6 ? 1e-6 : 1e-12;
        expect(Math.abs(got[i].re - ref[i].re)).toBeLessThan(slack);
        expect(Math.abs(got[i].im - ref[i].im)).toBeLessThan(slack);
      }
    }
  });

  it('3×3 to 6×6 random matrices: tr A, tr A² and det A (mathjs) from the eigenvalues, also where mathjs eigs fails', () => {
    const r = rng(7);
    let mathjsFailed = 0;
    for (let k = 0; k < 2000; k++) {
      const n = 3 + (k % 4);
      const A = Array.from({ length: n }, () => Array.from({ length: n }, () => Math.round(2000 * r() - 1000) / 1000));
      const inv = invariants(eigenvalues(A));
      const A2 = math.multiply(A, A) as number[][];
      expect(Math.abs(inv.sum - traceOf(A))).toBeLessThan(1e-11);
      expect(Math.abs(inv.imSum)).toBeLessThan(1e-11);
      expect(Math.abs(inv.sumSq - traceOf(A2))).toBeLessThan(1e-10);
      expect(Math.abs(inv.prodRe - math.det(A))).toBeLessThan(1e-10);
      expect(Math.abs(inv.prodIm)).toBeLessThan(1e-10);
      try {
        math.eigs(A, { eigenvectors: false });
      } catch {
        mathjsFailed++;
      }
    }
    // the cases the change is for are among them
    expect(mathjsFailed).toBeGreaterThan(10);
  });

  it('the problem reader takes that plant (a Riccati terminal weight needs its stabilisability check)', () => {
    const loaded = parseProblem(
      {
        name: 'spiral',
        plant: { A: SPIRAL, B: [[0.34, -0.789], [-0.717, -0.082], [0.434, -0.277]] },
        horizon: 4,
        weights: { state: [[1, 0, 0], [0, 0, 0], [0, 0, 0.25]], input: [[0.3, 0], [0, 0.9]], terminal: 'riccati' },
        constraints: { input: { lower: [-2, -2], upper: [2, 2] } },
        parameters: { lower: [-1, -1, -1], upper: [1, 1, 1] },
      },
      'spiral.json',
    );
    expect(loaded.model!.n).toBe(3);
  });
});
