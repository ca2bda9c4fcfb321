import { describe, it, expect } from 'vitest';
import { join } from 'node:path';
import { root } from '../helpers/solved.js';
import { qpReference } from '../helpers/reference.js';
import { loadProblem } from '../../src/problem/index.js';
import { buildMpqp } from '../../src/formulation/index.js';
import { solvePartition, witnessKey } from '../../src/mpqp/solve.js';
import { joinPartitions, recheckGiveUps } from '../../src/mpqp/canonical.js';
import type { CriticalRegion } from '../../src/mpqp/types.js';

// The table's `unresolvedPieces` is the number of facets the exploration gave a piece up on that
// the final regions leave uncovered (`recheckGiveUps`). Here the give-up is put in by hand (a
// witness key) on a facet of a complete partition, with and without the region across it; whether
// the point across is feasible and which law holds there is decided by quadprog (Goldfarb–Idnani
// dual method, the online-QP reference), not by the project's solver.
const mpqp = buildMpqp(loadProblem(join(root, 'test', 'fixtures', 'problems', 'two-carts-4d.json')));
const canonical = joinPartitions(mpqp, [solvePartition(mpqp)]);
const regions = canonical.regions;
const boxes = canonical.boxes!;

/** max over rows of A θ − b (ECMAScript arithmetic: ≤ 0 means θ is in the region) */
function violation(R: Pick<CriticalRegion, 'A' | 'b'>, th: number[]): number {
  let v = -Infinity;
  R.A.forEach((row, i) => {
    let s = -R.b[i];
    row.forEach((a, j) => (s += a * th[j]));
    v = Math.max(v, s);
  });
  return v;
}

function lawAt(R: CriticalRegion, th: number[]): number[] {
  return R.law.F.map((row, i) => row.reduce((s, a, j) => s + a * th[j], R.law.g[i]));
}

/**
 * A facet f of a region R, a region Q across it and a point θx in Q just across the facet (≥ 1e-4
 * inside every other row of R's facet, 1e-4 … 1e-2 across), where quadprog finds the MPC feasible, Q's
 * law matches it and R's law (extended) does not: removing Q leaves a genuine hole next to the facet.
 */
function facetWithRegionAcross(): { r: number; f: number; q: number; theta: number[] } | null {
  for (let r = 0; r < regions.length; r++) {
    const R = regions[r];
    const c = R.chebyshev.center;
    for (let f = 0; f < R.facets.length; f++) {
      if (R.facets[f].kind === 'box' || R.facets[f].neighbours.length !== 1) continue;
      const a = R.A[f];
      // the centre projected on the facet's plane, inside the facet's other rows with margin
      let d = R.b[f];
      a.forEach((x, j) => (d -= x * c[j]));
      const p = Array.from(c, (x, j) => x + d * a[j]);
      if (R.A.some((row, i) => i !== f && row.reduce((s, x, j) => s + x * p[j], -R.b[i]) > -1e-4)) continue;
      const q = R.facets[f].neighbours[0];
      for (const h of [1e-2, 1e-3, 1e-4]) {
        const theta = p.map((x, j) => x + h * a[j]);
        if (violation(regions[q], theta) > -1e-9) continue;
        const ref = qpReference(mpqp, theta);
        if (!ref.feasible) continue;
        const uq = lawAt(regions[q], theta);
        const ur = lawAt(R, theta);
        const gap = Math.max(...ur.map((u, i) => Math.abs(u - ref.z[i])));
        const fit = Math.max(...uq.map((u, i) => Math.abs(u - ref.z[i])));
        if (fit < 1e-6 && gap > 1e-4) return { r, f, q, theta };
      }
    }
  }
  return null;
}

describe('the re-check of given-up facets against the final regions', () => {
  it('a complete partition covers a facet; without the region across it the facet counts as unresolved (quadprog: feasible there, another law)', () => {
    expect(canonical.stats.complete).toBe(true);
    const found = facetWithRegionAcross();
    expect(found, 'a facet with a region across it and a feasible point there').not.toBeNull();
    const { r, f, q, theta } = found!;
    const witness = [witnessKey(regions[r].activeSet, f)];
    const lp = { lps: 0, reference: false };
    // every region present: the facet is covered (Q across it), nothing unresolved
    expect(recheckGiveUps(mpqp, regions, boxes, witness, lp)).toBe(0);
    // Q removed: no region left holds θx (checked by plain arithmetic), though quadprog says the MPC
    // is feasible there: a hole next to the facet, which the re-check must count
    const keep = regions.map((_, i) => i).filter((i) => i !== q);
    const without = keep.map((i) => regions[i]);
    expect(without.every((R) => violation(R, theta) > 1e-9)).toBe(true);
    expect(qpReference(mpqp, theta).feasible).toBe(true);
    expect(recheckGiveUps(mpqp, without, keep.map((i) => boxes[i]), witness, lp)).toBe(1);
    // every non-box facet of the first 40 regions named at once: in the complete partition each is
    // covered by the regions across it or lies on the feasible set's boundary (the MPC infeasible
    // just across; those with no neighbour listed are checked with quadprog below)
    const all: string[] = [];
    for (const R of regions.slice(0, 40)) R.facets.forEach((fi, k) => fi.kind !== 'box' && all.push(witnessKey(R.activeSet, k)));
    expect(all.length).toBeGreaterThan(40);
    expect(recheckGiveUps(mpqp, regions, boxes, all, lp)).toBe(0);
    let boundary = 0;
    for (const R of regions.slice(0, 40))
      R.facets.forEach((fi, k) => {
        if (fi.kind === 'box' || fi.neighbours.length > 0) return;
        // a point of the facet: the Chebyshev centre projected on its plane, when inside the other rows
        const a = R.A[k];
        let d = R.b[k];
        a.forEach((x, j) => (d -= x * R.chebyshev.center[j]));
        const p = Array.from(R.chebyshev.center, (x, j) => x + d * a[j]);
        if (R.A.some((row, i) => i !== k && row.reduce((s, x, j) => s + x * p[j], -R.b[i]) > -1e-6)) return;
        boundary++;
        expect(qpReference(mpqp, p.map((x, j) => x + 1e-4 * a[j])).feasible).toBe(false);
      });
    expect(boundary).toBeGreaterThan(0);
  });

  it('a witness that cannot be re-checked (region not in the partition, or an old file\'s "?") counts as unresolved, never as covered', () => {
    const lp = { lps: 0, reference: false };
    expect(recheckGiveUps(mpqp, regions, boxes, ['?'], lp)).toBe(1);
    expect(recheckGiveUps(mpqp, regions, boxes, ['999,1000:0'], lp)).toBe(1);
    expect(recheckGiveUps(mpqp, regions, boxes, [], lp)).toBe(0);
  });
});
