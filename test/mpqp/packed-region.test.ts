import { describe, it, expect } from 'vitest';
import { join } from 'node:path';
import { buildMpqp, loadProblem, solvePartition } from '../../src/index.js';
import { packedTail } from '../../src/mpqp/region.js';
import type { CriticalRegion } from '../../src/mpqp/types.js';
import { qpReference } from '../helpers/reference.js';
import { root } from '../helpers/solved.js';

// buildRegion keeps a full region's move sequence and value function packed in one typed array and
// gives them as own enumerable accessors. These checks hold them to what plain data members would give
// under the ECMAScript built-ins (JSON.stringify, object spread, Object.keys, structuredClone of the
// HTML structured-clone algorithm) and their numbers to quadprog (Goldfarb–Idnani dual method) at each
// region's Chebyshev centre.
const mpqp = buildMpqp(loadProblem(join(root, 'examples', 'positioning-axis.yaml')));
const part = solvePartition(mpqp);
const regions = part.regions;

/** J(z, θ) = ½ zᵀ H z + (F θ + c)ᵀ z + ½ θᵀ Y θ, written out from the mpQP's definition (types.ts) */
function cost(z: number[], th: number[]): number {
  const { nz, ntheta: nt, H, F, c, Y } = mpqp;
  let J = 0;
  for (let i = 0; i < nz; i++) {
    let hz = 0;
    for (let j = 0; j < nz; j++) hz += H[i * nz + j] * z[j];
    let lin = c[i];
    for (let j = 0; j < nt; j++) lin += F[i * nt + j] * th[j];
    J += 0.5 * z[i] * hz + lin * z[i];
  }
  for (let i = 0; i < nt; i++) for (let j = 0; j < nt; j++) J += 0.5 * th[i] * Y[i * nt + j] * th[j];
  return J;
}

describe('a region built by the engine: moves and value packed, read as data', () => {
  it('every region carries them packed, and the keys are those of a table region, in order', () => {
    expect(regions.length).toBeGreaterThan(10);
    for (const R of regions) {
      expect(packedTail(R)).toBeInstanceOf(Float64Array);
      expect(Object.keys(R)).toEqual(['id', 'activeSet', 'A', 'b', 'facets', 'chebyshev', 'law', 'moves', 'value']);
    }
  });

  it('object spread and structuredClone give the same plain region, and the JSON text of the region itself', () => {
    for (const R of regions.slice(0, 40)) {
      const spread = { ...R };
      const cloned = structuredClone(R);
      // plain data members in the copies (no accessors left)
      expect(Object.getOwnPropertyDescriptor(spread, 'moves')!.get).toBeUndefined();
      expect(Object.getOwnPropertyDescriptor(cloned, 'value')!.get).toBeUndefined();
      // (JSON writes −0 as 0, so the copies are compared with each other, and as JSON text)
      expect(cloned).toEqual(spread);
      expect(JSON.stringify(spread)).toBe(JSON.stringify(R));
      expect(JSON.stringify(cloned)).toBe(JSON.stringify(R));
      // the law is the leading rows of the move sequence
      expect(spread.moves!.F.slice(0, mpqp.lawSize)).toEqual(R.law.F);
      expect(spread.moves!.g.slice(0, mpqp.lawSize)).toEqual(R.law.g);
    }
  });

  it('moves and value at the Chebyshev centre agree with quadprog', () => {
    for (const R of regions) {
      const th = R.chebyshev.center;
      const ref = qpReference(mpqp, th);
      expect(ref.feasible).toBe(true);
      const M = R.moves!;
      const z = M.F.map((row, i) => row.reduce((s, f, j) => s + f * th[j], M.g[i]));
      for (let i = 0; i < mpqp.nz; i++) expect(Math.abs(z[i] - ref.z[i])).toBeLessThan(1e-6 * (1 + Math.abs(ref.z[i])));
      const V = R.value!;
      let J = V.r;
      for (let i = 0; i < th.length; i++) {
        J += V.q[i] * th[i];
        for (let j = 0; j < th.length; j++) J += th[i] * V.Q[i][j] * th[j];
      }
      const Jref = cost(ref.z, th);
      expect(Math.abs(J - Jref)).toBeLessThan(1e-6 * (1 + Math.abs(Jref)));
    }
  });

  it('a write makes moves and value plain data members (the other one keeps its numbers)', () => {
    const R = { ...regions[0] } as CriticalRegion; // a plain copy stays as it was
    const built = regions[1];
    const before = JSON.stringify(built.value);
    const moves = { F: [[1, 2]], g: [3] };
    built.moves = moves;
    expect(built.moves).toBe(moves);
    expect(JSON.stringify(built.value)).toBe(before);
    expect(Object.getOwnPropertyDescriptor(built, 'moves')!.writable).toBe(true);
    expect(packedTail(built)).toBeUndefined();
    expect(Object.keys(built)).toEqual(Object.keys(R));
  });
});
