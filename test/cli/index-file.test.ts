import { existsSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadProblem } from '../../src/problem/index.js';
import { buildMpqp } from '../../src/formulation/index.js';
import { tol } from '../../src/tol.js';
import type { MpqpProblem } from '../../src/mpqp/types.js';
import { qpReference } from '../helpers/reference.js';
import { rng } from '../problem/rng.js';
import { builtCli, runCli, type CliRun } from '../helpers/cli.js';

// The index file as an offline product (`solve --index`, `join --index`, `evaluate` reading
// <table>.index), end to end through the built CLI. References: the bytes `evaluate --index` writes
// for the same table file (every command must write that one index), the bytes of `evaluate
// --no-index` (reading an index must change no output byte), JSON.parse (ECMAScript) of the table
// for each answer's half-spaces, and quadprog (Goldfarb–Idnani dual method, test/helpers/reference.ts
// qpReference) for u(0) at the points a region holds.
const root = join(import.meta.dirname, '..', '..');
const axisFile = join(root, 'examples', 'positioning-axis.yaml');
const dir = mkdtempSync(join(tmpdir(), 'tessera-index-file-'));
const at = (f: string) => join(dir, f);
const run = (args: string[]): Promise<CliRun> => runCli(args, { killAfter: 120000 });
const oneLine = (s: string) => s.split('\n').filter((l) => l.length > 0);
const tmpLeftovers = () => readdirSync(dir).filter((f) => /^\..*\.tmp$/.test(f));

let axis: MpqpProblem;
let solved: CliRun;
/** 3 000 seeded points over the parameter box (and a little beyond), one per line, with a header */
const few = at('few.csv');
/** 120 000 seeded points: large enough for two threads (≥ 1 MiB per thread) */
const many = at('many.csv');

function points(count: number, seed: number): string {
  const r = rng(seed);
  const lines = ['pos_err,speed'];
  for (let k = 0; k < count; k++) lines.push([-3.3 + 6.6 * r(), -0.88 + 1.76 * r()].join(','));
  return lines.join('\n') + '\n';
}

beforeAll(async () => {
  if (!existsSync(builtCli)) throw new Error(`${builtCli} is missing: run \`npm run build\` first`);
  writeFileSync(few, points(3000, 91));
  writeFileSync(many, points(120_000, 92));
  axis = buildMpqp(loadProblem(axisFile));
  solved = await run(['solve', axisFile, '-o', at('t.json'), '--index']);
}, 120000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** u(0) of a CSV run against quadprog, and the answer's region holding θ (its rows from the table file), at every `step`-th line. */
function checkAnswers(csv: string, tablePath: string, step: number): number {
  const table = JSON.parse(readFileSync(tablePath, 'utf8')) as { regions: { A: number[][]; b: number[] }[] };
  const lo = -1.5; // examples/positioning-axis.yaml: |force| ≤ 1.5, the bound quadprog's u(0) meets
  let checked = 0;
  const lines = csv.trim().split('\n');
  for (let i = 1; i < lines.length; i += step) {
    const cells = lines[i].split(',');
    const theta = [Number(cells[0]), Number(cells[1])];
    const region = Number(cells[2]);
    if (region < 0) continue;
    const reg = table.regions[region];
    reg.A.forEach((row, h) => expect(row[0] * theta[0] + row[1] * theta[1]).toBeLessThanOrEqual(reg.b[h] + tol.inside));
    const ref = qpReference(axis, theta);
    expect(ref.feasible, `θ=${theta}`).toBe(true);
    const want = Math.min(-lo, Math.max(lo, ref.z[0]));
    expect(Math.abs(Number(cells[3]) - want), `θ=${theta}`).toBeLessThanOrEqual(1e-6 * (1 + Math.abs(want)));
    checked++;
  }
  return checked;
}

describe('solve --index and evaluate reading <table>.index', () => {
  it('solve --index writes <table>.index: the bytes evaluate --index writes for that table file; evaluate then reads it (laws only) with the bytes of --no-index; u(0) = quadprog', async () => {
    expect(solved.status, solved.stderr).toBe(0);
    expect(solved.stderr).toBe('');
    const side = at('t.json.index');
    expect(solved.stdout).toContain(`  index: written to ${side} (`);
    expect(solved.stdout).toContain(`\`tessera evaluate ${at('t.json')}\` reads it`);
    expect(readFileSync(side).subarray(0, 16).toString('latin1')).toBe('tessera-index 1\n');
    // the reference bytes: evaluate --index FILE on the same table file writes its index
    const ref = await run(['evaluate', at('t.json'), '--at', '0,0', '--index', at('ref.index'), '-q']);
    expect(ref.status, ref.stderr).toBe(0);
    expect(readFileSync(side).equals(readFileSync(at('ref.index')))).toBe(true);
    const runs = {
      plain: await run(['evaluate', at('t.json'), '--points', few, '--times']),
      none: await run(['evaluate', at('t.json'), '--points', few, '--no-index', '--times']),
      json: await run(['evaluate', at('t.json'), '--points', few, '--json']),
      jsonNone: await run(['evaluate', at('t.json'), '--points', few, '--json', '--no-index']),
      clamp: await run(['evaluate', at('t.json'), '--points', few, '--clamp']),
      clampNone: await run(['evaluate', at('t.json'), '--points', few, '--clamp', '--no-index']),
    };
    for (const [k, r] of Object.entries(runs)) expect(r.status, `${k}: ${r.stderr}`).toBe(0);
    // read back: the table for its laws only (as with --index); --no-index reads it in full and builds a tree
    expect(runs.plain.stderr).toMatch(/tessera: times .*, table and index \(laws only\) [\d.]+\/[\d.]+, table /);
    expect(runs.none.stderr).toMatch(/tessera: times \(wall\/CPU seconds\): start-up [\d.]+\/[\d.]+, table [\d.]+\/[\d.]+, points/);
    expect(runs.plain.stderr).not.toContain('note');
    expect(runs.plain.stdout).toBe(runs.none.stdout);
    expect(runs.json.stdout).toBe(runs.jsonNone.stdout);
    expect(runs.clamp.stdout).toBe(runs.clampNone.stdout);
    expect(runs.plain.stdout.split('\n')).toHaveLength(3002);
    expect(checkAnswers(runs.plain.stdout, at('t.json'), 7)).toBeGreaterThan(100);
    // evaluate reads, it never writes the index: the file is as solve left it
    expect(readFileSync(side).equals(readFileSync(at('ref.index')))).toBe(true);
    expect(tmpLeftovers()).toEqual([]);
  }, 120000);

  it('solve --index FILE writes FILE (no <table>.index); evaluate --index alone keeps <table>.index; all the same bytes', async () => {
    const r = await run(['solve', axisFile, '-o', at('u.json'), '--index', at('named.index'), '--threads', '1']);
    expect(r.status, r.stderr).toBe(0);
    expect(r.stdout).toContain(`read it with \`tessera evaluate ${at('u.json')} --index ${at('named.index')}\``);
    expect(existsSync(at('u.json.index'))).toBe(false);
    // the same problem on one thread is the same table bytes (the determinism rule), so the same index
    expect(readFileSync(at('u.json')).equals(readFileSync(at('t.json')))).toBe(true);
    expect(readFileSync(at('named.index')).equals(readFileSync(at('ref.index')))).toBe(true);
    // evaluate --index without a file: <table>.index, written when missing, read after
    const w = await run(['evaluate', at('u.json'), '--points', few, '--index']);
    expect(w.status, w.stderr).toBe(0);
    expect(w.stderr).toContain(`tessera: index ${at('u.json.index')} written`);
    expect(readFileSync(at('u.json.index')).equals(readFileSync(at('ref.index')))).toBe(true);
    const again = await run(['evaluate', at('u.json'), '--points', few, '--index', '--times']);
    expect(again.status, again.stderr).toBe(0);
    expect(again.stderr).not.toContain('tessera: index');
    expect(again.stderr).toContain('table and index (laws only)');
    const none = await run(['evaluate', at('u.json'), '--points', few, '--no-index']);
    expect(w.stdout).toBe(none.stdout);
    expect(again.stdout).toBe(none.stdout);
  }, 120000);

  it('a stale or foreign <table>.index is never used: the table edited after its index, or another table\'s index, gives a note and the bytes of --no-index (one and two threads); the file is left as it was', async () => {
    // the table edited after its index was written: the same JSON with one more line end, other bytes
    const edited = at('edited.json');
    writeFileSync(edited, readFileSync(at('t.json'), 'utf8') + '\n');
    writeFileSync(`${edited}.index`, readFileSync(at('t.json.index')));
    // another table's index beside this one: the 5-region table of the same problem
    const capped = at('capped.json');
    const c = await run(['solve', axisFile, '-o', capped, '--max-regions', '5', '-q']);
    expect(c.status, c.stderr).toBe(0);
    const foreign = at('foreign.json');
    writeFileSync(foreign, readFileSync(at('t.json')));
    const ci = await run(['evaluate', capped, '--at', '0,0', '--index', `${foreign}.index`, '-q']);
    expect(ci.status, ci.stderr).toBe(0);
    const foreignBytes = readFileSync(`${foreign}.index`);
    const runs: Record<string, CliRun> = {};
    for (const [name, table] of [
      ['edited', edited],
      ['foreign', foreign],
    ] as const)
      for (const t of ['1', '2']) {
        runs[`${name}-${t}`] = await run(['evaluate', table, '--points', many, '--threads', t]);
        runs[`${name}-${t}-none`] = await run(['evaluate', table, '--points', many, '--threads', t, '--no-index']);
        runs[`${name}-${t}-q`] = await run(['evaluate', table, '--points', many, '--threads', t, '-q']);
      }
    for (const [k, r] of Object.entries(runs)) expect(r.status, `${k}: ${r.stderr}`).toBe(0);
    for (const name of ['edited', 'foreign']) {
      const path = name === 'edited' ? edited : foreign;
      for (const t of ['1', '2']) {
        expect(runs[`${name}-${t}`].stdout).toBe(runs[`${name}-1-none`].stdout);
        expect(runs[`${name}-${t}-q`].stdout).toBe(runs[`${name}-1-none`].stdout);
        expect(oneLine(runs[`${name}-${t}`].stderr)).toEqual([`tessera: note: ${path}.index not used: it was the index of another table file (tessera evaluate --index writes it again)`]);
        expect(runs[`${name}-${t}-q`].stderr).toBe('');
        expect(runs[`${name}-${t}-none`].stderr).toBe('');
      }
    }
    // the answers themselves: the edited table's (the same regions) against quadprog
    expect(checkAnswers(runs['edited-2'].stdout, edited, 997)).toBeGreaterThan(40);
    expect(runs['edited-2'].stdout).toBe(runs['foreign-2'].stdout);
    // never written by a run without --index
    expect(readFileSync(`${edited}.index`).equals(readFileSync(at('t.json.index')))).toBe(true);
    expect(readFileSync(`${foreign}.index`).equals(foreignBytes)).toBe(true);
    // a damaged <table>.index (cut short) is not used either
    const cut = at('cut.json');
    writeFileSync(cut, readFileSync(at('t.json')));
    writeFileSync(`${cut}.index`, readFileSync(at('t.json.index')).subarray(0, 5000));
    const fromCut = await run(['evaluate', cut, '--points', few]);
    expect(fromCut.status, fromCut.stderr).toBe(0);
    expect(fromCut.stderr).toMatch(/^tessera: note: .*cut\.json\.index not used: array "\w+" runs past the end of the file \(cut short\?\) \(tessera evaluate --index writes it again\)\n$/);
    const fewNone = await run(['evaluate', at('t.json'), '--points', few, '--no-index']);
    expect(fromCut.stdout).toBe(fewNone.stdout);
  }, 240000);

  it('join --index and solve --resume --index write the index of their table: the same bytes as solve --index (the same table bytes)', async () => {
    const parts = await Promise.all([1, 2].map((i) => run(['solve', axisFile, '--part', `${i}/2`, '-o', at(`axis.part-${i}-of-2.json`), '-q'])));
    for (const p of parts) expect(p.status, p.stderr).toBe(0);
    const j = await run(['join', at('axis.part-2-of-2.json'), at('axis.part-1-of-2.json'), '--index']);
    expect(j.status, j.stderr).toBe(0);
    expect(j.stdout).toContain(`  index: written to ${at('axis.table.json.index')} (`);
    expect(readFileSync(at('axis.table.json')).equals(readFileSync(at('t.json')))).toBe(true);
    expect(readFileSync(at('axis.table.json.index')).equals(readFileSync(at('ref.index')))).toBe(true);
    // join -q --index FILE: nothing printed, the file written
    const jq = await run(['join', at('axis.part-1-of-2.json'), at('axis.part-2-of-2.json'), '-o', at('jq.json'), '--index', at('jq.index'), '-q']);
    expect(jq.status, jq.stderr).toBe(0);
    expect(jq.stdout + jq.stderr).toBe('');
    expect(readFileSync(at('jq.index')).equals(readFileSync(at('ref.index')))).toBe(true);
    // a bounded run with a checkpoint, resumed with --index: the complete table and its index
    const cp = at('cp.json');
    const b = await run(['solve', axisFile, '-o', at('r.json'), '--max-regions', '40', '--checkpoint', cp, '--index', '-q']);
    expect(b.status, b.stderr).toBe(0);
    // the bounded table has its own index (of its bytes)
    const bounded = await run(['evaluate', at('r.json'), '--at', '0,0', '--index', at('bounded.index'), '-q']);
    expect(bounded.status, bounded.stderr).toBe(0);
    expect(readFileSync(at('r.json.index')).equals(readFileSync(at('bounded.index')))).toBe(true);
    const r = await run(['solve', axisFile, '--resume', cp, '-o', at('r.json'), '--index']);
    expect(r.status, r.stderr).toBe(0);
    expect(readFileSync(at('r.json')).equals(readFileSync(at('t.json')))).toBe(true);
    expect(readFileSync(at('r.json.index')).equals(readFileSync(at('ref.index')))).toBe(true);
    expect(tmpLeftovers()).toEqual([]);
  }, 240000);
});
