import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { runCli } from '../helpers/cli.js';
import { qpReference } from '../helpers/reference.js';
import { randomInBox, rng } from '../helpers/solved.js';
import { loadProblem } from '../../src/problem/index.js';
import { buildMpqp } from '../../src/formulation/index.js';
import { subBox } from '../../src/mpqp/canonical.js';

// The facet cover on a sub-box of the 4-D, 200-row fixture where it used to fail: before the fix
// `solve --part 36/256` finished with 959 unresolved facet pieces (landings into regions thinner
// than tol.radius, and point QPs that called a point feasible beside an infeasible part). Through
// the built CLI (`npx tsc -p tsconfig.json` first), ~6 s. Reference: quadprog (Goldfarb–Idnani
// dual method, an independent QP solver) at seeded points of the sub-box: every feasible point
// lies in a region of the part file, whose law gives quadprog's first move.
const root = join(import.meta.dirname, '..', '..');
const problem = join(root, 'test', 'fixtures', 'scale', 'boom-4d-n20.json');
const dir = mkdtempSync(join(tmpdir(), 'tessera-cover-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('solve --part 36/256 of boom-4d-n20 (used to leave 959 unresolved pieces)', () => {
  it('completes with 0 unresolved pieces, and the part covers every feasible point of its sub-box as quadprog says', async () => {
    const out = join(dir, 'boom.part-36-of-256.json');
    const r = await runCli(['solve', problem, '--part', '36/256', '--lean', '--threads', '1', '-o', out], { killAfter: 170_000 });
    expect(r.status, r.stderr).toBe(0);
    expect(r.stdout).toContain('part 36 of 256');
    expect(r.stdout).toContain('complete: yes');
    expect(r.stdout).not.toContain('WARNING');
    expect(r.stdout).not.toContain('LP difference');
    const part = JSON.parse(readFileSync(out, 'utf8'));
    expect(part.stats.complete).toBe(true);
    expect(part.stats.unresolvedPieces).toBe(0);
    for (const v of Object.values(part.stats.causes as Record<string, number>)) expect(v).toBe(0);
    const mpqp = buildMpqp(loadProblem(problem));
    const sub = subBox(mpqp.box, 35, 256);
    const regions = part.regions as { A: number[][]; b: number[]; law: { F: number[][]; g: number[] } }[];
    expect(regions.length).toBeGreaterThan(100);
    const rnd = rng(3606);
    let feasible = 0;
    for (let k = 0; k < 400; k++) {
      const th = randomInBox({ lower: sub.lower, upper: sub.upper }, rnd);
      const ref = qpReference(mpqp, th);
      if (!ref.feasible) continue;
      feasible++;
      const R = regions.find((q) => q.A.every((a, i) => a.reduce((s, x, j) => s + x * th[j], 0) <= q.b[i] + 1e-7));
      expect(R, `θ=${th}: feasible by quadprog, in no region`).toBeDefined();
      for (let i = 0; i < mpqp.lawSize; i++) {
        const u = R!.law.F[i].reduce((s, x, j) => s + x * th[j], R!.law.g[i]);
        expect(Math.abs(u - ref.z[i])).toBeLessThan(1e-6 * (1 + Math.abs(ref.z[i])));
      }
    }
    expect(feasible).toBeGreaterThan(50);
  });
});
