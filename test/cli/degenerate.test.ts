import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { formulate, loadProblem, parseTableJson, evaluatePoints } from '../../src/index.js';
import { qpReference } from '../helpers/reference.js';
import { randomInBox, rng } from '../helpers/solved.js';

// Degenerate problems found by a randomised campaign of our own, solved through the CLI. Reference:
// quadprog (Goldfarb–Idnani dual method) for u(0) and for feasibility at random points.
const root = join(import.meta.dirname, '..', '..');
const cli = join(root, 'dist', 'src', 'cli', 'main.js');
const dir = mkdtempSync(join(tmpdir(), 'tessera-degenerate-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('tessera solve on degenerate problems', () => {
  it('thin-slab-tracking (stacks of sub-micrometre regions, facets given up): completes, and its laws are quadprog\'s', () => {
    // before the difference walk was resumed and bounded (DIFFERENCE_LPS), this ran past 2 minutes
    // (past 10 on the whole reference range) without a word, --time-limit or not
    const file = join(root, 'test', 'fixtures', 'degenerate', 'thin-slab-tracking.json');
    const out = join(dir, 'slab.table.json');
    const res = spawnSync(process.execPath, [cli, 'solve', file, '-o', out, '--threads', '1'], { encoding: 'utf8', timeout: 110_000 });
    expect(res.status).toBe(0);
    expect(res.stdout).toMatch(/complete: yes/);
    // the give-ups are reported, and every one is covered by the final regions
    expect(res.stdout).toMatch(/facet piece\(s\) given up on at (\d+) facet\(s\).*re-checked against the final regions: (\d+) of those \1 facet\(s\) covered/);
    const table = parseTableJson(readFileSync(out, 'utf8'), out);
    expect(table.stats.complete).toBe(true);
    expect(table.stats.unresolvedPieces).toBe(0);
    const { mpqp } = formulate(loadProblem(file));
    const r = rng(41);
    const pts = Array.from({ length: 400 }, () => randomInBox(mpqp.box, r));
    const got = evaluatePoints(table, pts);
    let compared = 0;
    got.forEach((e, k) => {
      const ref = qpReference(mpqp, pts[k]);
      if (!ref.feasible) {
        expect(e.region).toBe(-1);
        return;
      }
      expect(e.region).toBeGreaterThanOrEqual(0);
      compared++;
      e.u!.forEach((u, i) => expect(Math.abs(u - ref.z[i])).toBeLessThan(1e-6 * (1 + Math.abs(ref.z[i]))));
    });
    expect(compared).toBeGreaterThan(100);
    // the probes across the pieces left uncovered found regions no landing reached
    expect(res.stdout).toMatch(/probes across the uncovered pieces found [1-9]\d* more region\(s\)/);
  }, 120_000);

  for (const threads of [1, 2])
    it(`tracking-wedges-5d (overlapping regions of degenerate active sets), ${threads} thread(s): complete without give-ups, no holes, quadprog's laws`, () => {
      // an overlapping region was once taken for a copy of the region it overlaps: 14 facets were
      // left uncovered after 136 s (8 hole witnesses from \`tessera gaps\`); now ~2 s
      const file = join(root, 'test', 'fixtures', 'degenerate', 'tracking-wedges-5d.json');
      const out = join(dir, `wedges-${threads}.table.json`);
      const res = spawnSync(process.execPath, [cli, 'solve', file, '-o', out, '--threads', String(threads)], { encoding: 'utf8', timeout: 110_000 });
      expect(res.status).toBe(0);
      expect(res.stdout).toMatch(/complete: yes/);
      expect(res.stdout).not.toMatch(/given up|WARNING/);
      const gaps = spawnSync(process.execPath, [cli, 'gaps', out], { encoding: 'utf8', timeout: 110_000 });
      expect(gaps.status).toBe(0);
      expect(gaps.stdout).toMatch(/facet probes: \d+ non-box facets stepped across, 0 landed in a hole/);
      const table = parseTableJson(readFileSync(out, 'utf8'), out);
      expect(table.regions.length).toBeGreaterThan(900);
      const { mpqp } = formulate(loadProblem(file));
      const r = rng(43 + threads);
      const pts = Array.from({ length: 400 }, () => randomInBox(mpqp.box, r));
      const got = evaluatePoints(table, pts);
      got.forEach((e, k) => {
        const ref = qpReference(mpqp, pts[k]);
        expect(e.region >= 0).toBe(ref.feasible);
        if (ref.feasible) e.u!.forEach((u, i) => expect(Math.abs(u - ref.z[i])).toBeLessThan(1e-6 * (1 + Math.abs(ref.z[i]))));
      });
    }, 120_000);
});
