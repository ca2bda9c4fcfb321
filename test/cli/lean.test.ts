import { mkdtempSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runCli, type CliRun } from '../helpers/cli.js';
import { contractQp, solveContractQp } from '../helpers/contract-qp.js';
import { randomInBox, rng } from '../helpers/solved.js';
import { readTableFile, writeTableFile } from '../../src/table/file.js';
import { parseTableJson, tableToJson, evaluateTable } from '../../src/table/table.js';
import { checkStability } from '../../src/check/audit.js';
import { loadProblem } from '../../src/problem/index.js';
import type { TableFile } from '../../src/table/format.js';

// `tessera solve --lean` end to end through the built CLI (`npx tsc -p tsconfig.json` first).
// References: quadprog (Goldfarb–Idnani dual active-set method) on the QP read literally off the
// problem file (test/helpers/contract-qp.ts) for u(0); the full table of the same problem for
// the point location (a lean table drops data, never changes a region).
const root = join(import.meta.dirname, '..', '..');
const boom = join(root, 'test', 'fixtures', 'scale', 'boom-4d-n8.json');
const soft = join(root, 'examples', 'motor-soft-speed.json');
const dir = mkdtempSync(join(tmpdir(), 'tessera-lean-'));
const L = join(dir, 'boom.lean.json');
const F = join(dir, 'boom.full.json');
const SL = join(dir, 'soft.lean.json');
const SF = join(dir, 'soft.full.json');
const PTS = join(dir, 'points.csv');
// enough regions of the 4-D case for a per-region size; the first N regions do not depend on N
const N = 700;
const runs: Record<string, CliRun> = {};
let points: number[][] = [];

beforeAll(async () => {
  const jobs: Record<string, string[]> = {
    // one thread: a bounded run then stops at the same N regions, in the same order, lean or full
    lean: ['solve', boom, '--lean', '--max-regions', String(N), '--threads', '1', '-o', L],
    full: ['solve', boom, '--max-regions', String(N), '--threads', '1', '-o', F],
    softLean: ['solve', soft, '--lean', '-o', SL, '-q'],
    softFull: ['solve', soft, '-o', SF, '-q'],
  };
  const keys = Object.keys(jobs);
  let next = 0;
  const worker = async () => {
    while (next < keys.length) {
      const k = keys[next++];
      runs[k] = await runCli(jobs[k]);
    }
  };
  await Promise.all([worker(), worker()]);
  const t = JSON.parse(readFileSync(F, 'utf8')) as TableFile;
  const rnd = rng(8);
  // seeded points: uniform in the box, and each region's Chebyshev centre (surely inside a region)
  points = Array.from({ length: 400 }, () => randomInBox(t.box, rnd));
  for (const r of t.regions.slice(0, 300)) points.push(r.chebyshev.center);
  writeFileSync(PTS, points.map((p) => p.join(',')).join('\n') + '\n');
}, 300000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('tessera solve --lean', () => {
  it('writes a table that says it is lean, with no moves and no value function, one region per line', () => {
    expect(runs.lean.stderr).toBe('');
    expect(runs.lean.status).toBe(0);
    expect(runs.lean.stdout).toMatch(/INCOMPLETE/); // bounded by --max-regions
    expect(runs.lean.stdout).toMatch(/lean table: u\(0\) laws, half-spaces, active sets and neighbours only/);
    const text = readFileSync(L, 'utf8');
    const t = JSON.parse(text) as TableFile;
    expect(t.version).toBe(3);
    expect(t.lean).toBe(true);
    expect(t.regions.length).toBe(N);
    for (const r of t.regions) {
      expect(r.moves).toBeUndefined();
      expect(r.value).toBeUndefined();
      expect(r.law.F.length).toBe(1);
    }
    const lines = text.split('\n');
    const open = lines.indexOf(' "regions": [');
    expect(open).toBeGreaterThan(0);
    expect(lines[open + N + 1]).toBe(' ],');
    lines.slice(open + 1, open + 1 + N).forEach((l, i) => expect((JSON.parse(l.replace(/,$/, '')) as { id: number }).id).toBe(i));
    const full = JSON.parse(readFileSync(F, 'utf8')) as TableFile;
    expect(full.lean).toBe(false);
    expect(full.regions.every((r) => r.moves && r.value)).toBe(true);
  });

  it('4-D case: at most 1.5 kB per region (whole file over regions), under 0.6 of the full table (both one region per line)', () => {
    const lean = statSync(L).size / N;
    const full = statSync(F).size / N;
    expect(lean).toBeLessThanOrEqual(1500);
    expect(lean).toBeLessThan(0.6 * full);
  });

  it('keeps every region as the full table has it, apart from moves and value', () => {
    const lean = JSON.parse(readFileSync(L, 'utf8')) as TableFile;
    const full = JSON.parse(readFileSync(F, 'utf8')) as TableFile;
    const strip = (t: TableFile) => t.regions.map(({ moves: _m, value: _v, ...rest }) => rest);
    expect(strip(lean)).toEqual(strip(full));
    const { lean: _a, regions: _b, ...headLean } = lean;
    const { lean: _c, regions: _d, ...headFull } = full;
    expect(headLean).toEqual(headFull);
  });

  it('evaluates identically to the full table at seeded points (tessera evaluate, byte for byte)', async () => {
    const [a, b] = await Promise.all([runCli(['evaluate', L, '--points', PTS, '-q']), runCli(['evaluate', F, '--points', PTS, '-q'])]);
    expect(a.status).toBe(0);
    expect(b.status).toBe(0);
    expect(a.stdout).toBe(b.stdout);
    const located = a.stdout.split('\n').slice(1).filter((l) => l && !/,-1,/.test(l)).length;
    expect(located).toBeGreaterThanOrEqual(300);
  });

  it('u(0) of the lean table agrees with quadprog on the QP read off the problem file', () => {
    // reference: quadprog (Goldfarb–Idnani) on the contract's QP at θ (test/helpers/contract-qp.ts)
    const t = readTableFile(L);
    const cq = contractQp(JSON.parse(readFileSync(boom, 'utf8')));
    const Hc = {};
    let compared = 0;
    for (const th of points) {
      const e = evaluateTable(t, th);
      if (e.region < 0) continue;
      const z = solveContractQp(cq, th, Hc);
      expect(z, `θ = ${th}`).not.toBeNull();
      expect(Math.abs(e.u![0] - z![0]), `θ = ${th}`).toBeLessThan(1e-6 * (1 + Math.abs(z![0])));
      compared++;
    }
    expect(compared).toBeGreaterThanOrEqual(300);
  });
});

describe('commands that need moves or the value function, on a lean table', () => {
  it('map --heat cost: one line, exit 2; map --heat of an input works', async () => {
    const [cost, u] = await Promise.all([runCli(['map', L, '--heat', 'cost', '-o', join(dir, 'c.svg')]), runCli(['map', L, '--heat', 'torque', '-o', join(dir, 'u.svg'), '-q'])]);
    expect(cost.stderr).toBe(`tessera: ${L}: lean: a lean table keeps no value function J*(θ); draw the cost heat map from a table solved without --lean\n`);
    expect(cost.status).toBe(2);
    expect(u.stderr).toBe('');
    expect(u.status).toBe(0);
  });

  it('evaluate --json with soft limits: slack values null and said so once; the full table gives them', async () => {
    expect(runs.softLean.status).toBe(0);
    expect(runs.softFull.status).toBe(0);
    const [a, b] = await Promise.all([runCli(['evaluate', SL, '--at', '0.9,0.2', '--json']), runCli(['evaluate', SF, '--at', '0.9,0.2', '--json'])]);
    expect(a.stderr).toBe(`tessera: warning: ${SL} is a lean table (no move sequence): slack values are null; solve without --lean to get them\n`);
    expect(a.status).toBe(0);
    expect(b.stderr).toBe('');
    const pa = JSON.parse(a.stdout).points[0];
    const pb = JSON.parse(b.stdout).points[0];
    expect(pa.region).toBe(pb.region);
    expect(pa.u).toEqual(pb.u);
    expect(pa.slacks).toBeNull();
    expect(pb.slacks).not.toBeNull();
  });

  it('audit stability: NOT CHECKED (INFO) on a lean table, never a silent pass', () => {
    const table = readTableFile(SL);
    const model = loadProblem(soft).model!;
    const r = checkStability({ table, model } as Parameters<typeof checkStability>[0]);
    expect(r.verdict).toBe('INFO');
    expect(r.line).toMatch(/^NOT CHECKED: the table is lean/);
  });
});

describe('table files: streamed write and read, versions', () => {
  it('writeTableFile writes exactly tableToJson; the streaming reader (tiny chunks) gives the same table', () => {
    for (const path of [L, F]) {
      const t = readTableFile(path);
      const out = join(dir, 'rewritten.json');
      writeTableFile(out, t);
      expect(readFileSync(out, 'utf8')).toBe(tableToJson(t));
      expect(readFileSync(out, 'utf8')).toBe(readFileSync(path, 'utf8'));
      // every line longer than the 1 kB buffer at least once: the reader grows it
      const streamed = readTableFile(out, { streamAbove: 0, chunkBytes: 1024 });
      expect(streamed).toEqual(t);
    }
  });

  it('a cut-off file read by the streaming reader: one-line error naming the file', () => {
    const text = readFileSync(L, 'utf8');
    const cut = join(dir, 'cut.json');
    writeFileSync(cut, text.slice(0, Math.floor(text.length / 2)));
    expect(() => readTableFile(cut, { streamAbove: 0, chunkBytes: 4096 })).toThrow(/regions(\[\d+\])?: (the regions list is not closed|not valid JSON)/);
  });

  it('a version 2 table (always full) is read as a full version 3 table; a table without moves must say lean', () => {
    const full = readTableFile(F);
    const { lean: _l, ...rest } = full;
    const v2 = JSON.stringify({ ...rest, version: 2 }, null, 1);
    const back = parseTableJson(v2, 'v2.json');
    expect(back.version).toBe(3);
    expect(back.lean).toBe(false);
    expect(back.regions).toEqual(full.regions);
    const lean = readTableFile(L);
    expect(() => parseTableJson(JSON.stringify({ ...lean, lean: false }), 'x.json')).toThrow(/regions\[0\]: moves or value missing, and the table does not say "lean": true/);
    expect(() => parseTableJson(JSON.stringify({ ...full, lean: true }), 'y.json')).toThrow(/regions\[0\]: a lean table keeps no moves or value/);
    expect(() => parseTableJson(JSON.stringify({ ...full, lean: 'yes' }), 'z.json')).toThrow(/lean: must be true or false/);
  });
});
