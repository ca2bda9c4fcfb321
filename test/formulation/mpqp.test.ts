import { describe, it, expect, afterAll } from 'vitest';
import { join } from 'node:path';
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { loadProblem, parseProblem } from '../../src/problem/index.js';
import { buildRawMpqp, formulate } from '../../src/formulation/index.js';
import { solvePartition } from '../../src/mpqp/solve.js';
import { root, fixtureFiles, exampleFiles } from '../helpers/solved.js';

const cli = join(root, 'dist', 'src', 'cli', 'main.js');
const dir = mkdtempSync(join(tmpdir(), 'tessera-mpqp-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
const rows = (a: Float64Array, r: number, c: number) => Array.from({ length: r }, (_, i) => Array.from(a.subarray(i * c, (i + 1) * c)));

/** A condensed regulator written out as an mpqp file (the raw matrices, before conditioning). */
function asMpqpFile(file: string): unknown {
  const loaded = loadProblem(file);
  const q = buildRawMpqp(loaded.model!);
  return {
    name: `${loaded.name}-as-mpqp`,
    mpqp: {
      H: rows(q.H, q.nz, q.nz),
      F: rows(q.F, q.nz, q.ntheta),
      c: Array.from(q.c),
      Y: rows(q.Y, q.ntheta, q.ntheta),
      G: rows(q.G, q.nc, q.nz),
      w: Array.from(q.w),
      E: rows(q.E, q.nc, q.ntheta),
      outputs: q.lawSize,
    },
    parameters: { lower: Array.from(q.box.lower), upper: Array.from(q.box.upper) },
  };
}

describe('direct mpqp input', () => {
  const mpcFiles = [...exampleFiles, ...fixtureFiles].filter((f) => loadProblem(f).model && loadProblem(f).model!.m * loadProblem(f).model!.Nu <= 12);
  for (const file of mpcFiles.slice(0, 6)) {
    it(`${file.split('/').pop()}: the condensed regulator as an mpqp file gives byte-equal regions and laws`, () => {
      const a = formulate(loadProblem(file));
      // through JSON text, as a user's file would be read
      const b = formulate(parseProblem(JSON.parse(JSON.stringify(asMpqpFile(file))), 'as-mpqp.json'));
      const pa = solvePartition(a.mpqp);
      const pb = solvePartition(b.mpqp);
      expect(pb.stats.complete).toBe(true);
      expect(JSON.stringify(pb.regions)).toBe(JSON.stringify(pa.regions));
      expect(b.layout.theta).toEqual([{ kind: 'parameter', offset: 0, size: a.mpqp.ntheta, names: a.mpqp.thetaNames.map((_, i) => `t${i + 1}`), refersTo: a.mpqp.thetaNames.map((_, i) => i) }]);
      expect(b.layout.lawSize).toBe(a.layout.lawSize);
    }, 60_000);
  }

  it('an mpqp table goes through solve, evaluate (k law entries), gaps, map and emit', () => {
    const file = join(root, 'examples', 'blend-ratio-mpqp.json');
    const table = join(dir, 'blend.table.json');
    const run = (args: string[]) => spawnSync(process.execPath, [cli, ...args], { encoding: 'utf8' });
    const s = run(['solve', file, '-o', table]);
    expect(s.status, s.stderr).toBe(0);
    expect(s.stdout).toMatch(/θ = \[demand, quality\], law = \[feed_a, feed_b\], mpqp, 3 decision variables/);
    const t = JSON.parse(readFileSync(table, 'utf8'));
    expect(t.layout.formulation).toBe('mpqp');
    expect(t.layout.z).toEqual([{ kind: 'decision', offset: 0, size: 3, names: ['feed_a', 'feed_b', 'feed_c'], refersTo: [0, 1, 2] }]);
    const e = run(['evaluate', table, '--at', '1,0.5']);
    expect(e.status, e.stderr).toBe(0);
    const [head, row] = e.stdout.trim().split('\n');
    expect(head).toBe('demand,quality,region,feed_a,feed_b');
    expect(row.split(',')).toHaveLength(5);
    const g = run(['gaps', table]);
    expect(g.status, g.stderr).toBe(0);
    expect(g.stdout).toMatch(/holes\s+0\.000 %/);
    const svg = join(dir, 'blend.svg');
    const m = run(['map', table, '-o', svg]);
    expect(m.status, m.stderr).toBe(0);
    expect(existsSync(svg)).toBe(true);
    const tr = join(dir, 'x0.csv');
    writeFileSync(tr, '0,0\n');
    const m2 = run(['map', table, '-o', join(dir, 'b2.svg'), '--trajectories', tr]);
    expect(m2.status).toBe(2);
    expect(m2.stderr).toMatch(/--trajectories: closed-loop trajectories need an MPC table/);
    const out = join(dir, 'gen');
    const c = run(['emit', table, '-o', out, '--prefix', 'blend']);
    expect(c.status, c.stderr).toBe(0);
    const h = readFileSync(join(out, 'blend.h'), 'utf8');
    expect(h).toMatch(/theta\[0\.\.1\]: parameters of the mpQP/);
    expect(h).toMatch(/u\[0\.\.1\]: the first 2 entries of the mpQP decision vector z/);
  }, 120_000);
});
