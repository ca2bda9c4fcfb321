/**
 * The audit engine (src/check/audit.ts) and the exact invariance check (src/check/invariance.ts).
 * References: quadprog (Goldfarb–Idnani, via test/helpers/reference.ts qpReference) for the online
 * MPC that confirms a witness; javascript-lp-solver (lpFeasibleReference) for feasibility of θ;
 * the plant update x⁺ = A x + B u written out here (common practice). Both cart tables are
 * constructed cases (test/fixtures/audit/*.json): loss of feasibility with a short horizon and no
 * terminal set is a known property of MPC, but the numbers here are our own, not from a source.
 */
import { describe, expect, it } from 'vitest';
import { join } from 'node:path';
import { root, solved, type Solved } from '../helpers/solved.js';
import { lpFeasibleReference, qpReference } from '../helpers/reference.js';
import { checkInvariance } from '../../src/check/invariance.js';
import { plantOf } from '../../src/check/simulate.js';
import { checkCoverage, checkStability, type AuditInputs } from '../../src/check/audit.js';
import { makeSliceSpec, sliceRegion } from '../../src/partition/slice.js';
import { regionContains } from '../../src/table/table.js';
import type { TableFile } from '../../src/table/format.js';

const shortFile = join(root, 'test', 'fixtures', 'audit', 'cart-short.json');
const longFile = join(root, 'test', 'fixtures', 'audit', 'cart-long.json');
const terminalFile = join(root, 'test', 'fixtures', 'audit', 'cart-terminal.json');

function inputs(s: Solved, table: TableFile = s.table): AuditInputs {
  return {
    table,
    model: s.loaded.model,
    mpqp: s.mpqp,
    recomputedHash: table.problemHash,
    problemFileHash: null,
    toolVersion: 'test',
    online: (th) => {
      const r = qpReference(s.mpqp, th);
      return r.feasible ? r.z.slice(0, 1) : null;
    },
    embedded: { precision: 'double', search: 'sequential', certificate: null, cost: { worstMultiplyAdds: 0, worstComparisons: 0, worstDepth: 0, bytes: 0 } },
    samples: 1000,
    seed: 3,
  };
}

/** x⁺ = A x + B u with the region's law: the successor written out independently of the engine. */
function successor(s: Solved, region: number, th: number[]): number[] {
  const { A, B } = s.loaded.model;
  const law = s.table.regions[region].law;
  const u = law.F[0].reduce((a, f, j) => a + f * th[j], law.g[0]);
  return A.map((row, i) => row[0] * th[0] + row[1] * th[1] + B[i][0] * u);
}

describe("recursive feasibility by LP", { timeout: 60000 }, () => {
  it('short horizon: the LP finds a witness, and the online MPC from it becomes infeasible', () => {
    const s = solved(shortFile);
    const rep = checkInvariance(s.table, plantOf(s.loaded.model));
    expect(rep.proven).toBe(false);
    expect(rep.leaving.length).toBeGreaterThan(0);
    expect(rep.lps).toBe(rep.regions * rep.facets.total);
    for (const w of rep.leaving) {
      // the witness is feasible (javascript-lp-solver) and the MPC solves there
      expect(lpFeasibleReference(s.mpqp, w.witness)).toBe(true);
      // run the online MPC (quadprog) from the witness until its QP has no solution
      let x = w.witness.slice();
      let infeasibleAt = -1;
      for (let k = 0; k < 10 && infeasibleAt < 0; k++) {
        const q = qpReference(s.mpqp, x);
        if (!q.feasible) {
          infeasibleAt = k;
          break;
        }
        const { A, B } = s.loaded.model;
        x = A.map((row, i) => row[0] * x[0] + row[1] * x[1] + B[i][0] * q.z[0]);
      }
      expect(infeasibleAt).toBeGreaterThan(0);
      expect(lpFeasibleReference(s.mpqp, x)).toBe(false);
      // and the LP's own successor is that first infeasible θ (one step, same law)
      if (infeasibleAt === 1) w.successor.forEach((v, i) => expect(v).toBeCloseTo(x[i], 9));
    }
    // the first limit named is a predicted position limit of the last step
    expect(rep.leaving.map((l) => l.facet).join(' ')).toMatch(/pos\(2\) [<>]=/);
  });

  it('same plant and horizon with the terminal invariant set: proven, and J* decreases everywhere (Gilbert & Tan 1991; the textbook Lyapunov argument)', () => {
    const s = solved(terminalFile);
    expect(s.table.layout.features).toContain('terminalSet');
    const rep = checkInvariance(s.table, plantOf(s.loaded.model!));
    expect(rep.proven).toBe(true);
    expect(rep.leaving).toEqual([]);
    const st = checkStability(inputs(s));
    expect(st.verdict).toBe('PASS');
    expect(st.data.violations).toBe(0);
    expect(st.data.points).toBeGreaterThan(500);
    // the witnesses of the short table without the set are not even in this table's feasible set, or do not leave it
    const short = checkInvariance(solved(shortFile).table, plantOf(solved(shortFile).loaded.model!));
    expect(short.leaving.length).toBeGreaterThan(0);
  });

  it('long horizon: proven recursively feasible, with LP counts = regions × facets', () => {
    const s = solved(longFile);
    const rep = checkInvariance(s.table, plantOf(s.loaded.model));
    expect(rep.leaving).toEqual([]);
    expect(rep.proven).toBe(true);
    expect(rep.lps).toBe(rep.regions * rep.facets.total);
    expect(rep.facets.boundary).toBeGreaterThan(0);
  });

  it('a facet listed without neighbours but with regions beyond it is dropped, not taken as a boundary', () => {
    const s = solved(longFile);
    const idx = s.table.regions.findIndex((r) => regionContains(r, [0, 0]));
    // clear the neighbour lists of the region around the origin: its facets now look like boundaries
    const broken = { ...s.table, regions: s.table.regions.map((r, i) => (i === idx ? { ...r, facets: r.facets.map((f) => ({ ...f, neighbours: [] })) } : r)) };
    const rep = checkInvariance(broken, plantOf(s.loaded.model));
    expect(rep.facets.unconfirmed).toBe(s.table.regions[idx].facets.filter((f) => f.neighbours.length).length);
    expect(rep.proven).toBe(true);
    expect(rep.facets.total).toBe(checkInvariance(s.table, plantOf(s.loaded.model)).facets.total);
  });

  it('2-D: the LP verdict of every region equals the verdict from its exact polygon image', () => {
    for (const f of [shortFile, longFile, join(root, 'examples', 'positioning-axis.yaml')]) {
      const s = solved(f);
      const rep = checkInvariance(s.table, plantOf(s.loaded.model));
      const spec = makeSliceSpec(s.table.box, [0, 1]);
      const fromPolygons: number[] = [];
      s.table.regions.forEach((r, i) => {
        // exact polygon of the region (half-plane clipping, src/partition/polygon.ts); the image of a
        // convex polygon under an affine map is the hull of the vertex images, so it lies in the convex
        // covered set iff every image vertex does: inside the box and feasible (javascript-lp-solver)
        const poly = sliceRegion(r, spec);
        expect(poly.length).toBeGreaterThanOrEqual(3);
        const leaves = poly.some(([x, y]) => {
          const n = successor(s, i, [x, y]);
          const inBox = n.every((v, j) => v >= s.table.box.lower[j] - 1e-8 && v <= s.table.box.upper[j] + 1e-8);
          return !inBox || !lpFeasibleReference(s.mpqp, n);
        });
        if (leaves) fromPolygons.push(r.id);
      });
      expect(rep.leaving.map((l) => l.region).sort((a, b) => a - b)).toEqual(fromPolygons.sort((a, b) => a - b));
    }
  });
});

describe('coverage and stability in the audit', () => {
  it('a table with one region deleted fails coverage, and the witness lies in the deleted region', () => {
    const s = solved(longFile);
    const idx = s.table.regions.findIndex((r) => regionContains(r, [0, 0]));
    const removed = s.table.regions[idx];
    const holed = { ...s.table, regions: s.table.regions.filter((_, i) => i !== idx) };
    const c = checkCoverage(inputs(s, holed));
    expect(c.verdict).toBe('FAIL');
    expect(c.line).toMatch(/^HOLE: feasible θ in no region, e.g. pos=/);
    expect(c.witness).not.toBeNull();
    expect(regionContains(removed, c.witness!, 1e-6)).toBe(true);
    expect(checkCoverage(inputs(s)).verdict).toBe('PASS');
  });

  it('stability without a terminal set is evidence only (INFO); near the origin the decrease holds', () => {
    const s = solved(longFile);
    const st = checkStability(inputs(s));
    expect(st.verdict).toBe('INFO');
    expect(st.data.points).toBeGreaterThan(1000);
    expect(st.data.vertices).toBeGreaterThan(0);
    expect(st.line).toMatch(/evidence only/);
    // on the unconstrained region around the origin J* = xᵀPx with P from the Riccati equation, and
    // J*(x⁺) − J*(x) = −ℓ exactly (common practice): no violation where the successor stays in it
    const origin = s.table.regions.find((r) => regionContains(r, [0, 0]))!;
    expect(origin.activeSet).toEqual([]);
    const st0 = checkStability(inputs(s, { ...s.table, regions: [origin] }));
    expect(st0.data.points - st0.data.successorOutside).toBeGreaterThan(20);
    expect(st0.data.violations).toBe(0);
    expect(Math.abs(st0.data.worst)).toBeLessThan(1e-9);
  });
});
