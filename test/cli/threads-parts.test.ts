import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { root } from '../helpers/solved.js';
import { runCli, builtCli } from '../helpers/cli.js';
import { qpReference } from '../helpers/reference.js';
import { expectAgreesWithQuadprog } from '../helpers/agree.js';
import { loadProblem } from '../../src/problem/index.js';
import { buildMpqp } from '../../src/formulation/index.js';
import { parseTableJson, evaluateTable } from '../../src/table/table.js';

// Threads, parts and resumption must not change the table: every run below is compared byte for
// byte with one uninterrupted single-thread run, and the tables are checked against quadprog
// (Goldfarb–Idnani dual method, an independent QP solver) at seeded points.
const problem = join(root, 'test', 'fixtures', 'problems', 'two-carts-4d.json');
const dir = mkdtempSync(join(tmpdir(), 'tessera-threads-'));
const at = (f: string) => join(dir, f);
let reference = '';

function agreesWithQuadprog(file: string, source = problem): void {
  expectAgreesWithQuadprog(parseTableJson(readFileSync(file, 'utf8'), file), buildMpqp(loadProblem(source)), 8080, 300, 30);
}

function watch(child: ChildProcess): Promise<{ code: number | null; signal: NodeJS.Signals | null; stderr: string; stdout: string }> {
  let stderr = '';
  let stdout = '';
  child.stderr?.setEncoding('utf8').on('data', (d: string) => (stderr += d));
  child.stdout?.setEncoding('utf8').on('data', (d: string) => (stdout += d));
  return new Promise((r) => child.on('close', (code, signal) => r({ code, signal, stderr, stdout })));
}

/** Resolve when the checkpoint exists and lists at least one covered region (or the child ended). */
async function firstCheckpoint(file: string, child: ChildProcess): Promise<boolean> {
  for (;;) {
    if (child.exitCode !== null) return false;
    if (existsSync(file) && statSync(file).size > 0) {
      const cp = JSON.parse(readFileSync(file, 'utf8'));
      if (cp.state.done.length > 0) return true;
    }
    await new Promise((r) => setTimeout(r, 50));
  }
}

beforeAll(async () => {
  const r = await runCli(['solve', problem, '-o', at('single.json'), '--threads', '1', '-q']);
  expect(r.status).toBe(0);
  reference = readFileSync(at('single.json'), 'utf8');
}, 300_000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('solve --threads', () => {
  it('2 and 3 threads write the same bytes as 1, and the table agrees with quadprog', async () => {
    for (const n of [2, 3]) {
      const r = await runCli(['solve', problem, '-o', at(`t${n}.json`), '--threads', String(n)]);
      expect(r.status, r.stderr).toBe(0);
      expect(r.stdout).toMatch(/complete: yes/);
      expect(readFileSync(at(`t${n}.json`), 'utf8') === reference, `${n} threads`).toBe(true);
    }
    agreesWithQuadprog(at('single.json'));
  }, 300_000);
});

describe('solve --threads: every worker explores its own sub-box', () => {
  // examples of 1 to 4 parameters (a scalar law, a degenerate LICQ case, a terminal set, a 4-D crane):
  // 1, 2 and 3 threads (1, 2 and 3 sub-boxes) must write the same bytes, and each table agrees with
  // quadprog (Goldfarb–Idnani dual method) at seeded points
  const examples = [
    join(root, 'examples', 'positioning-axis.yaml'),
    join(root, 'examples', 'sway-damper-terminal-set.json'),
    join(root, 'examples', 'crane-trolley-4d.json'),
    join(root, 'test', 'fixtures', 'problems', 'licq-degenerate.json'),
  ];
  for (const file of examples) {
    it(`${file.split('/').pop()}: 1, 2 and 3 threads write the same bytes, each agreeing with quadprog`, async () => {
      const name = file.split('/').pop()!.replace(/\.(json|yaml)$/, '');
      const bytes: string[] = [];
      for (const n of [1, 2, 3]) {
        const out = at(`${name}-t${n}.json`);
        const r = await runCli(['solve', file, '-o', out, '--threads', String(n)]);
        expect(r.status, r.stderr).toBe(0);
        expect(r.stdout).toMatch(/complete: yes/);
        bytes.push(readFileSync(out, 'utf8'));
        agreesWithQuadprog(out, file);
      }
      // and no holes in the 3-thread table (`gaps`: Monte Carlo points and facet probes; exit 0 = none
      // found). A sanity check of the CLI path; the outside reference for the laws is quadprog above
      const g = await runCli(['gaps', at(`${name}-t3.json`)]);
      expect(g.status, g.stdout + g.stderr).toBe(0);
      expect(g.stdout).toMatch(/0 landed in a hole/);
      expect(g.stdout).toMatch(/no holes found/);
      expect(bytes[1] === bytes[0], '2 threads differ from 1').toBe(true);
      expect(bytes[2] === bytes[0], '3 threads differ from 1').toBe(true);
    }, 300_000);
  }

  it('--part i/3 with --threads 2 (each part split again into 2 sub-boxes): the parts join to the same bytes, also mixed with a 1-thread part', async () => {
    for (const n of [1, 2, 3]) {
      const r = await runCli(['solve', problem, '--part', `${n}/3`, '-o', at(`p${n}-t2.json`), '--threads', '2', '-q']);
      expect(r.status, r.stderr).toBe(0);
    }
    const r1 = await runCli(['solve', problem, '--part', '2/3', '-o', at('p2-t1.json'), '--threads', '1', '-q']);
    expect(r1.status, r1.stderr).toBe(0);
    const j = await runCli(['join', at('p1-t2.json'), at('p2-t2.json'), at('p3-t2.json'), '-o', at('joined-t2.json'), '-q']);
    expect(j.status, j.stderr).toBe(0);
    expect(readFileSync(at('joined-t2.json'), 'utf8') === reference).toBe(true);
    const m = await runCli(['join', at('p1-t2.json'), at('p2-t1.json'), at('p3-t2.json'), '-o', at('joined-mixed.json'), '-q']);
    expect(m.status, m.stderr).toBe(0);
    expect(readFileSync(at('joined-mixed.json'), 'utf8') === reference).toBe(true);
  }, 300_000);
});

describe('solve --part i/k and join', () => {
  it('3 parts run as separate processes, joined in any order: the same bytes as one run', async () => {
    const runs = [1, 2, 3].map((i) => runCli(['solve', problem, '--part', `${i}/3`, '-o', at(`cart.part-${i}-of-3.json`), '--threads', '1']));
    const ended = await Promise.all(runs);
    ended.forEach((r, i) => {
      expect(r.status, r.stderr).toBe(0);
      expect(r.stdout).toContain(`part ${i + 1} of 3`);
    });
    const j = await runCli(['join', at('cart.part-3-of-3.json'), at('cart.part-1-of-3.json'), at('cart.part-2-of-3.json')]);
    expect(j.status, j.stderr).toBe(0);
    expect(j.stdout).toMatch(/regions from 3 parts[\s\S]*complete: yes — table written to .*cart\.table\.json/);
    const joined = readFileSync(at('cart.table.json'), 'utf8');
    expect(joined === reference).toBe(true);
    agreesWithQuadprog(at('cart.table.json'));
  }, 300_000);
});

describe('checkpoints', () => {
  it('a run killed with SIGKILL and resumed from its checkpoint writes the same bytes', async () => {
    const cp = at('kill.checkpoint.json');
    const child = spawn(process.execPath, [builtCli, 'solve', problem, '-o', at('killed.json'), '--checkpoint', cp, '--checkpoint-every', '0.2', '-q']);
    const ended = watch(child);
    const written = await firstCheckpoint(cp, child);
    expect(written, 'a checkpoint was written before the run ended').toBe(true);
    child.kill('SIGKILL');
    const e = await ended;
    expect(e.signal).toBe('SIGKILL');
    expect(existsSync(at('killed.json'))).toBe(false);
    const r = await runCli(['solve', problem, '--resume', cp, '-o', at('killed.json'), '-q']);
    expect(r.status, r.stderr).toBe(0);
    expect(readFileSync(at('killed.json'), 'utf8') === reference).toBe(true);
  }, 300_000);

  it('Ctrl-C writes a last checkpoint, says how to resume (exit 130), and the resumed table is the same bytes', async () => {
    const cp = at('int.checkpoint.json');
    const out = at('int.json');
    const child = spawn(process.execPath, [builtCli, 'solve', problem, '-o', out, '--checkpoint', cp, '--checkpoint-every', '0.2']);
    const ended = watch(child);
    const written = await firstCheckpoint(cp, child);
    expect(written, 'a checkpoint was written before the run ended').toBe(true);
    child.kill('SIGINT');
    const e = await ended;
    expect(e.code).toBe(130); // 128 + SIGINT (common practice)
    const esc = (s: string) => s.replace(/[.*+?^${}()|[\]\\]/g, '\\$&');
    expect(e.stderr).toMatch(
      new RegExp(`^tessera: interrupted: the solve of ${esc(problem)} was stopped after \\d+ regions \\(\\d+\\.\\d s\\); no table was written to ${esc(out)}\\ntessera: checkpoint written to ${esc(cp)}; continue with: tessera solve ${esc(problem)} --resume ${esc(cp)} -o ${esc(out)}\\n$`),
    );
    expect(existsSync(out)).toBe(false);
    const r = await runCli(['solve', problem, '--resume', cp, '-o', out, '--threads', '2', '-q']);
    expect(r.status, r.stderr).toBe(0);
    expect(readFileSync(out, 'utf8') === reference).toBe(true);
  }, 300_000);

  it('a checkpoint of a 2-thread run (2 sub-boxes) resumes on 1 thread, and a 1-thread checkpoint on 3 threads: the same bytes', async () => {
    const cp2 = at('split.checkpoint.json');
    const r1 = await runCli(['solve', problem, '-o', at('split.json'), '--threads', '2', '--max-regions', '40', '--checkpoint', cp2]);
    expect(r1.status, r1.stderr).toBe(0);
    expect(r1.stdout).toMatch(/complete: NO \(stopped: max-regions\)/);
    const saved = JSON.parse(readFileSync(cp2, 'utf8'));
    expect(saved.subBoxes.count).toBe(2);
    expect(saved.subBoxes.done.length).toBe(2);
    // the two sub-boxes (the cut chosen by the pilot) are recorded, and tile the parameter box of the
    // problem file: equal on every axis but one, where they meet
    const pbox = JSON.parse(readFileSync(problem, 'utf8')).parameters;
    const [b0, b1] = saved.subBoxes.boxes as { lower: number[]; upper: number[] }[];
    const cutAxes = pbox.lower.map((_: number, j: number) => j).filter((j: number) => b0.upper[j] !== b1.upper[j] || b0.lower[j] !== b1.lower[j]);
    expect(cutAxes.length).toBe(1);
    const a = cutAxes[0];
    expect(b0.lower[a]).toBe(pbox.lower[a]);
    expect(b1.upper[a]).toBe(pbox.upper[a]);
    expect(b0.upper[a]).toBe(b1.lower[a]);
    for (let j = 0; j < pbox.lower.length; j++) if (j !== a) expect([b0.lower[j], b0.upper[j]]).toEqual([pbox.lower[j], pbox.upper[j]]);
    const r2 = await runCli(['solve', problem, '--resume', cp2, '-o', at('split.json'), '--threads', '1', '-q']);
    expect(r2.status, r2.stderr).toBe(0);
    expect(readFileSync(at('split.json'), 'utf8') === reference).toBe(true);

    const cp1 = at('whole.checkpoint.json');
    const r3 = await runCli(['solve', problem, '-o', at('whole.json'), '--threads', '1', '--max-regions', '40', '--checkpoint', cp1]);
    expect(r3.status, r3.stderr).toBe(0);
    expect(JSON.parse(readFileSync(cp1, 'utf8')).subBoxes).toBeUndefined();
    const r4 = await runCli(['solve', problem, '--resume', cp1, '-o', at('whole.json'), '--threads', '3', '-q']);
    expect(r4.status, r4.stderr).toBe(0);
    expect(readFileSync(at('whole.json'), 'utf8') === reference).toBe(true);
  }, 300_000);

  it('a checkpoint with a broken subBoxes entry is refused with the key named (exit 2)', async () => {
    const cp = JSON.parse(readFileSync(at('split.checkpoint.json'), 'utf8'));
    cp.subBoxes.done = [[]];
    const bad = at('bad-split.checkpoint.json');
    writeFileSync(bad, JSON.stringify(cp));
    const r = await runCli(['solve', problem, '--resume', bad, '-o', at('bad.json')]);
    expect(r.status).toBe(2);
    expect(r.stderr).toContain('subBoxes.done');
    expect(existsSync(at('bad.json'))).toBe(false);
  }, 300_000);

  it('2 threads cut across the axis whose mid-plane crosses fewer regions (the pilot), through the CLI', async () => {
    // min ½z² − θ₂ z, −1 ≤ z ≤ 1: z* = clip(θ₂, −1, 1) (a parabola's vertex clipped to an interval;
    // common practice), three slabs across θ₂ over [−3, 3]². The mid-plane θ₂ = 0 crosses one region,
    // θ₁ = 0 all three, so the cut is across θ₂ although θ₁ comes first and the box is square
    const file = at('slabs.json');
    writeFileSync(file, JSON.stringify({ name: 'slabs', mpqp: { H: [[1]], F: [[0, -1]], c: [0], G: [[1], [-1]], w: [1, 1], E: [[0, 0], [0, 0]], outputs: 1 }, parameters: { lower: [-3, -3], upper: [3, 3] } }));
    const cp = at('slabs.checkpoint.json');
    const r = await runCli(['solve', file, '-o', at('slabs-t2.json'), '--threads', '2', '--max-regions', '1', '--checkpoint', cp]);
    expect(r.status, r.stderr).toBe(0);
    const boxes = JSON.parse(readFileSync(cp, 'utf8')).subBoxes.boxes;
    expect(boxes).toEqual([
      { lower: [-3, -3], upper: [3, 0] },
      { lower: [-3, 0], upper: [3, 3] },
    ]);
    const resumed = await runCli(['solve', file, '--resume', cp, '-o', at('slabs-t2.json'), '--threads', '2', '-q']);
    expect(resumed.status, resumed.stderr).toBe(0);
    const one = await runCli(['solve', file, '-o', at('slabs-t1.json'), '--threads', '1', '-q']);
    expect(one.status, one.stderr).toBe(0);
    expect(readFileSync(at('slabs-t2.json'), 'utf8') === readFileSync(at('slabs-t1.json'), 'utf8')).toBe(true);
    const table = parseTableJson(readFileSync(at('slabs-t2.json'), 'utf8'), 'slabs-t2.json');
    expect(table.regions.length).toBe(3);
    for (const th of [[-2.5, -2], [1, -0.5], [0, 0.3], [2.9, 1.7]]) expect(evaluateTable(table, th).u![0]).toBeCloseTo(Math.max(-1, Math.min(1, th[1])), 9);
  }, 300_000);

  it('a checkpoint whose recorded sub-boxes are broken is refused with the key named (exit 2)', async () => {
    const cp = JSON.parse(readFileSync(at('split.checkpoint.json'), 'utf8'));
    cp.subBoxes.boxes = [cp.subBoxes.boxes[0]];
    const bad = at('bad-boxes.checkpoint.json');
    writeFileSync(bad, JSON.stringify(cp));
    const r = await runCli(['solve', problem, '--resume', bad, '-o', at('bad.json')]);
    expect(r.status).toBe(2);
    expect(r.stderr).toBe(`tessera: ${bad}: subBoxes.boxes: must hold 2 boxes {lower, upper} of the parameter dimension\n`);
    expect(existsSync(at('bad.json'))).toBe(false);
  }, 300_000);

  it('--max-regions on 2 threads: two runs write the same bytes, at most the bound, marked incomplete, each region agreeing with quadprog at its Chebyshev centre; its checkpoint resumes to the complete table', async () => {
    // the problem has 253 regions (the single-thread reference above): a bound of 120 stops both sub-boxes
    const bound = 120;
    const runs: string[] = [];
    for (const name of ['bounded-a', 'bounded-b']) {
      const r = await runCli(['solve', problem, '-o', at(`${name}.json`), '--max-regions', String(bound), '--threads', '2', '--checkpoint', at(`${name}.checkpoint.json`)]);
      expect(r.status, r.stderr).toBe(0);
      expect(r.stdout).toMatch(/complete: NO \(stopped: max-regions\)/);
      runs.push(readFileSync(at(`${name}.json`), 'utf8'));
    }
    expect(runs[0] === runs[1], 'two bounded 2-thread runs differ').toBe(true);
    const table = parseTableJson(runs[0], at('bounded-a.json'));
    expect(table.stats.complete).toBe(false);
    expect(table.stats.stopReason).toBe('max-regions');
    expect(table.regions.length).toBeLessThanOrEqual(bound);
    expect(table.regions.length).toBeGreaterThan(bound / 2);
    expect(table.regions.length).toBeLessThan(JSON.parse(reference).regions.length);
    // every region kept is a true critical region: at its Chebyshev centre quadprog (Goldfarb–Idnani,
    // the online QP) is feasible, and its optimal first move is the region's law there
    const mpqp = buildMpqp(loadProblem(problem));
    table.regions.forEach((R, i) => {
      const c = Array.from(R.chebyshev.center);
      const ref = qpReference(mpqp, c);
      expect(ref.feasible, `region ${i}`).toBe(true);
      const e = evaluateTable(table, c);
      expect(e.region, `region ${i}`).toBe(i);
      for (let k = 0; k < mpqp.lawSize; k++) expect(Math.abs(e.u![k] - ref.z[k]), `region ${i}`).toBeLessThan(1e-6 * (1 + Math.abs(ref.z[k])));
    });
    // the checkpoint written at that stop (2 sub-boxes) resumes, unbounded, to the single-thread table
    for (const threads of ['2', '1']) {
      const r = await runCli(['solve', problem, '--resume', at('bounded-a.checkpoint.json'), '-o', at(`bounded-resumed-${threads}.json`), '--threads', threads, '-q']);
      expect(r.status, r.stderr).toBe(0);
      expect(readFileSync(at(`bounded-resumed-${threads}.json`), 'utf8') === reference, `resumed on ${threads} threads`).toBe(true);
    }
    // the same checkpoint emptied of its regions, as one written before the first region was found
    // (Ctrl-C during the pilot): whole box or 2 sub-boxes, it resumes to the complete table, not to
    // an empty one marked complete (it did before: no region known, nothing was explored)
    const cp = JSON.parse(readFileSync(at('bounded-a.checkpoint.json'), 'utf8'));
    cp.state.regions = [];
    cp.state.boxes = [];
    cp.state.done = [];
    for (const [name, subBoxes] of [['whole', { count: 1, finished: [], done: [[]] }], ['split', { ...cp.subBoxes, finished: [], done: [[], []] }]] as const) {
      writeFileSync(at(`empty-${name}.checkpoint.json`), JSON.stringify({ ...cp, subBoxes }));
      const r = await runCli(['solve', problem, '--resume', at(`empty-${name}.checkpoint.json`), '-o', at(`empty-${name}.json`), '--threads', '2', '-q']);
      expect(r.status, r.stderr).toBe(0);
      expect(readFileSync(at(`empty-${name}.json`), 'utf8') === reference, `empty ${name} checkpoint`).toBe(true);
    }
  }, 300_000);

  it('a run stopped by --max-regions leaves a checkpoint that completes the same table', async () => {
    const cp = at('max.checkpoint.json');
    const r1 = await runCli(['solve', problem, '-o', at('max.json'), '--max-regions', '60', '--checkpoint', cp]);
    expect(r1.status).toBe(0);
    expect(r1.stdout).toMatch(/complete: NO \(stopped: max-regions\)/);
    expect(r1.stderr).toContain(`tessera: checkpoint written to ${cp}; continue with: tessera solve ${problem} --resume ${cp} -o ${at('max.json')}`);
    const r2 = await runCli(['solve', problem, '--resume', cp, '-o', at('max.json'), '-q']);
    expect(r2.status, r2.stderr).toBe(0);
    expect(readFileSync(at('max.json'), 'utf8') === reference).toBe(true);
  }, 300_000);
});
