import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, relative } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { parse as parseYaml } from 'yaml';
import { loadProblem } from '../../src/problem/index.js';
import { buildMpqp } from '../../src/formulation/index.js';
import { tol } from '../../src/tol.js';
import type { MpqpProblem } from '../../src/mpqp/types.js';
import { qpReference, lpFeasibleReference } from '../helpers/reference.js';
import { rng } from '../problem/rng.js';
import { runCli, type CliRun } from '../helpers/cli.js';

// End to end through the built CLI. References: quadprog (Goldfarb–Idnani dual method, via
// test/helpers/reference.ts qpReference) for u(0) and javascript-lp-solver (lpFeasibleReference)
// for feasibility of θ; the CSV layout is the `tessera evaluate` section of
// /work/shared/spec/problem-format.md.
const root = join(import.meta.dirname, '..', '..');
const cli = join(root, 'dist', 'src', 'cli', 'main.js');
const axisFile = join(root, 'examples', 'positioning-axis.yaml');
const thermalFile = join(root, 'examples', 'thermal-zone-pair.json');
const dir = mkdtempSync(join(tmpdir(), 'tessera-solve-eval-'));
const tablePath = join(dir, 't.json');
const tablePath2 = join(dir, 'again', 't.json');
const cappedPath = join(dir, 't5.json');
const timedPath = join(dir, 'thermal-timed.json');

type Run = CliRun;
const run = (args: string[]) => runCli(args);

/** Run independent CLI invocations a few at a time (2-core machine; each is mostly start-up). */
async function runAll(jobs: Record<string, string[]>, width = 3): Promise<Record<string, Run>> {
  const keys = Object.keys(jobs);
  const out: Record<string, Run> = {};
  let next = 0;
  const worker = async () => {
    while (next < keys.length) {
      const k = keys[next++];
      out[k] = await run(jobs[k]);
    }
  };
  await Promise.all(Array.from({ length: width }, worker));
  return out;
}

/** dist is stale when some src/**.ts is newer than its emitted .js (or has none). */
function distIsStale(): boolean {
  const walk = (d: string): string[] =>
    readdirSync(d, { withFileTypes: true }).flatMap((e) => (e.isDirectory() ? walk(join(d, e.name)) : e.name.endsWith('.ts') ? [join(d, e.name)] : []));
  return walk(join(root, 'src')).some((ts) => {
    const js = join(root, 'dist', relative(root, ts)).replace(/\.ts$/, '.js');
    return !existsSync(js) || statSync(js).mtimeMs < statSync(ts).mtimeMs;
  });
}

const tmpLeftovers = (d: string) => readdirSync(d).filter((f) => /^\..*\.tmp$/.test(f));
const oneLine = (s: string) => s.split('\n').filter((l) => l.length > 0);

const badMax = ['0', '-3', '2.5', 'abc'];
const failDir = join(dir, 'fail');
const badProblem = join(failDir, 'bad.json');
const badProblemOut = join(failDir, 'bad.table.json');
const occupied = join(failDir, 'occupied.json'); // a directory where the table should go
let solveRuns: Record<string, Run>;
let axis: MpqpProblem;
let names: { theta: string[]; inputs: string[] };

beforeAll(async () => {
  if (distIsStale()) {
    // tsc emits even when some other file of the shared tree does not typecheck; main.js is what we need
    spawnSync(process.execPath, [join(root, 'node_modules', 'typescript', 'bin', 'tsc'), '-p', join(root, 'tsconfig.json')], { stdio: 'ignore' });
  }
  if (!existsSync(cli)) throw new Error(`${cli} is missing after the build`);
  mkdirSync(join(dir, 'again'));
  mkdirSync(occupied, { recursive: true });
  writeFileSync(badProblem, '{"plant": {"A": [[1]], "B": [[1]]}, "horizon": 0}');
  solveRuns = await runAll({
    full: ['solve', axisFile, '-o', tablePath],
    again: ['solve', axisFile, '-o', tablePath2],
    capped: ['solve', axisFile, '-o', cappedPath, '--max-regions', '5'],
    timed: ['solve', thermalFile, '-o', timedPath, '--time-limit', '0.001'],
    badProblem: ['solve', badProblem, '-o', badProblemOut],
    occupied: ['solve', axisFile, '-o', occupied, '--max-regions', '3'],
    ...Object.fromEntries(badMax.map((v) => [`max ${v}`, ['solve', axisFile, '-o', join(dir, `bad-max-${v}.json`), '--max-regions', v]])),
  });
  axis = buildMpqp(loadProblem(axisFile));
  // names as written in the example file (no input-rate terms, so θ = x(0))
  const doc = parseYaml(readFileSync(axisFile, 'utf8')) as { names: { states: string[]; inputs: string[] } };
  names = { theta: doc.names.states, inputs: doc.names.inputs };
}, 120000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('tessera solve', () => {
  it('writes a complete table: format, version, regions, stats.complete = true', () => {
    const r = solveRuns.full;
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0);
    const t = JSON.parse(readFileSync(tablePath, 'utf8'));
    expect(t.format).toBe('tessera-table');
    expect(t.version).toBe(3); // 3 since lean tables (a version 2 file is still read)
    expect(t.lean).toBe(false);
    expect(Array.isArray(t.regions)).toBe(true);
    expect(t.regions.length).toBeGreaterThan(1);
    expect(t.stats.complete).toBe(true);
    expect(t.stats.stopReason).toBe('done');
    expect(t.stats.regions).toBe(t.regions.length);
    expect(t.thetaNames).toEqual(names.theta);
    expect(t.inputNames).toEqual(names.inputs);
    expect(r.stdout).toMatch(/complete: yes/);
    expect(r.stdout).not.toMatch(/INCOMPLETE/);
  });

  it('the summary says where the time went; its total is within the wall time the test measures (the test\'s own clock)', async () => {
    const t0 = performance.now();
    // crane-trolley-4d: a canonical form of ~0.8 s (2026-12-05), far above the 0.05 s that prints as
    // 0.0 (thermal-zone-pair's had fallen to ~0.1 s as the canonical form got faster: too close)
    const r = await run(['solve', join(root, 'examples', 'crane-trolley-4d.json'), '-o', join(dir, 'crane-time.json'), '--threads', '1']);
    const wall = (performance.now() - t0) / 1000;
    expect(r.status).toBe(0);
    const first = /regions, .* point QPs, ([\d.]+) s \(/.exec(r.stdout);
    const m = /time: set-up and exploration ([\d.]+) s, canonical form ([\d.]+) s, table assembled and written ([\d.]+) s; ([\d.]+) s in all/.exec(r.stdout);
    expect(first).not.toBeNull();
    expect(m).not.toBeNull();
    const [explore, canonical, written, all] = m!.slice(1).map(Number);
    expect(Math.abs(explore - Number(first![1]))).toBeLessThanOrEqual(0.05 + 1e-9); // the same figure, rounded to 0.1 s here
    expect(canonical).toBeGreaterThan(0); // crane-trolley-4d's canonical form takes well over 0.05 s
    expect(explore + canonical + written).toBeLessThanOrEqual(all + 0.15 + 1e-9); // each part rounded to 0.1 s
    expect(all).toBeLessThanOrEqual(wall); // the process lived longer than the solve it reports
  });

  it('the same problem solved twice gives byte-identical files', () => {
    expect(solveRuns.again.status).toBe(0);
    const a = readFileSync(tablePath);
    const b = readFileSync(tablePath2);
    expect(a.length).toBeGreaterThan(1000);
    expect(a.equals(b)).toBe(true);
  });

  it('--max-regions 5: table marked incomplete (max-regions), summary says INCOMPLETE', () => {
    const r = solveRuns.capped;
    expect(r.status).toBe(0);
    const t = JSON.parse(readFileSync(cappedPath, 'utf8'));
    expect(t.stats.complete).toBe(false);
    expect(t.stats.stopReason).toBe('max-regions');
    expect(t.regions.length).toBeGreaterThan(0);
    expect(t.regions.length).toBeLessThanOrEqual(5);
    expect(r.stdout).toMatch(/INCOMPLETE/);
    expect(r.stdout).toMatch(/max-regions/);
  });

  it('--time-limit 0.001 on the 4-parameter problem: incomplete (time-limit), summary says INCOMPLETE', () => {
    const r = solveRuns.timed;
    expect(r.status).toBe(0);
    const t = JSON.parse(readFileSync(timedPath, 'utf8'));
    expect(t.stats.complete).toBe(false);
    expect(t.stats.stopReason).toBe('time-limit');
    expect(r.stdout).toMatch(/INCOMPLETE/);
    expect(r.stdout).toMatch(/time-limit/);
  });

  for (const bad of badMax) {
    it(`--max-regions ${bad}: exit 2, one line naming the option, no table written`, () => {
      const out = join(dir, `bad-max-${bad}.json`);
      const r = solveRuns[`max ${bad}`];
      expect(r.status).toBe(2);
      const lines = oneLine(r.stderr);
      expect(lines).toHaveLength(1);
      expect(lines[0]).toMatch(/^tessera: \(command line\): --max-regions: .+/);
      expect(lines[0]).toContain(bad);
      expect(existsSync(out)).toBe(false);
    });
  }

  it('no temp files remain after the successful solves', () => {
    expect(tmpLeftovers(dir)).toEqual([]);
    expect(tmpLeftovers(join(dir, 'again'))).toEqual([]);
  });

  it('failures leave no half-written output and no temp file: bad problem file; output path that is a directory', () => {
    const r1 = solveRuns.badProblem;
    expect(r1.status).toBe(2);
    expect(oneLine(r1.stderr)).toHaveLength(1);
    expect(existsSync(badProblemOut)).toBe(false);
    // the rename of the finished temp file onto a directory fails: the temp file must be cleaned up
    const r2 = solveRuns.occupied;
    expect(r2.status).not.toBe(0);
    expect(oneLine(r2.stderr)).toHaveLength(1);
    expect(statSync(occupied).isDirectory()).toBe(true);
    expect(readdirSync(occupied)).toEqual([]);
    expect(tmpLeftovers(failDir)).toEqual([]);
  });
});

describe('tessera evaluate', () => {
  // seeded points in the parameter box, plus hand-picked ones:
  //  (0, 0)     the origin: z = 0 is feasible with zero cost, so u(0) = 0 (analytic)
  //  (0, 0.8)   speed 0.8 must fall to ≤ 0.6 in one step: 0.985·0.8 − 0.06·1.5 = 0.698 > 0.6 → infeasible
  //             (worked by hand from the example's A, B and limits)
  //  (10, 0)    outside the parameter box [−3,3]×[−0.8,0.8]
  //  (3, 0.8)   a box corner
  const points: number[][] = [[0, 0], [0, 0.8], [10, 0], [3, 0.8], [-1.25, 0.125]];
  const r = rng(4242);
  for (let k = 0; k < 60; k++) points.push([-3 + 6 * r(), -0.8 + 1.6 * r()]);
  const csvBody = points.map((p) => p.join(',')).join('\n') + '\n';
  const pointsFile = join(dir, 'points.csv');
  const headedFile = join(dir, 'points-headed.csv');
  let csv: Run;
  let ev: Record<string, Run>;

  beforeAll(async () => {
    writeFileSync(pointsFile, csvBody);
    writeFileSync(headedFile, `${names.theta.join(',')}\n${csvBody}`);
    badPoints.forEach((c, i) => writeFileSync(join(dir, `bad-points-${i}.csv`), c.text));
    ev = await runAll({
      csv: ['evaluate', tablePath, '--points', pointsFile],
      headed: ['evaluate', tablePath, '--points', headedFile],
      at: ['evaluate', tablePath, '--at', '0,0'],
      json: ['evaluate', tablePath, '--points', pointsFile, '--json'],
      incomplete: ['evaluate', cappedPath, '--at', '0,0'],
      missing: ['evaluate', tablePath, '--points', join(dir, 'no-such.csv')],
      ...Object.fromEntries(badPoints.map((_, i) => [`bad ${i}`, ['evaluate', tablePath, '--points', join(dir, `bad-points-${i}.csv`)]])),
    });
    csv = ev.csv;
  }, 60000);

  it('evaluating an incomplete table warns on stderr that it is INCOMPLETE', () => {
    expect(ev.incomplete.status).toBe(0);
    expect(ev.incomplete.stderr).toMatch(/INCOMPLETE/);
  });

  const inBox = (p: number[]) => p.every((v, j) => v >= axis.box.lower[j] && v <= axis.box.upper[j]);

  it('prints the contract CSV: header of θ names, region, u names; one line per point', () => {
    expect(csv.status).toBe(0);
    expect(csv.stderr).toBe('');
    expect(csv.stdout.endsWith('\n')).toBe(true);
    const lines = csv.stdout.slice(0, -1).split('\n');
    expect(lines[0]).toBe([...names.theta, 'region', ...names.inputs].join(','));
    expect(lines).toHaveLength(points.length + 1);
    lines.slice(1).forEach((line, i) => {
      const cells = line.split(',');
      expect(cells, line).toHaveLength(names.theta.length + 1 + names.inputs.length);
      // θ echoed as the shortest decimal of the same double
      expect(cells.slice(0, 2).map(Number), line).toEqual(points[i]);
      expect(cells.slice(0, 2), line).toEqual(points[i].map(String));
      expect(cells[2], line).toMatch(/^(-1|0|[1-9][0-9]*)$/);
    });
  });

  it('u(0) = quadprog within 1e-6(1+|u|); region −1 with empty u exactly when θ is outside the box or infeasible (javascript-lp-solver)', () => {
    const table = JSON.parse(readFileSync(tablePath, 'utf8'));
    const rows = csv.stdout.trim().split('\n').slice(1).map((l) => l.split(','));
    let feasible = 0;
    let none = 0;
    rows.forEach((cells, i) => {
      const theta = points[i];
      const region = Number(cells[2]);
      const feasibleHere = inBox(theta) && lpFeasibleReference(axis, theta);
      if (region < 0) {
        none++;
        expect(feasibleHere, `θ=${theta} is feasible but got region −1`).toBe(false);
        expect(cells.slice(3), `θ=${theta}`).toEqual(names.inputs.map(() => ''));
        return;
      }
      feasible++;
      expect(feasibleHere, `θ=${theta} got region ${region} but is not feasible`).toBe(true);
      // the region printed holds θ (its own half-spaces, checked here)
      const reg = table.regions[region];
      reg.A.forEach((row: number[], h: number) => expect(row[0] * theta[0] + row[1] * theta[1], `θ=${theta} in region ${region}`).toBeLessThanOrEqual(reg.b[h] + tol.inside));
      const ref = qpReference(axis, theta);
      expect(ref.feasible).toBe(true);
      const u = Number(cells[3]);
      expect(Number.isFinite(u)).toBe(true);
      expect(Math.abs(u - ref.z[0]), `θ=${theta}: u=${u}, quadprog ${ref.z[0]}`).toBeLessThanOrEqual(1e-6 * (1 + Math.abs(ref.z[0])));
    });
    expect(feasible).toBeGreaterThan(30);
    expect(none).toBeGreaterThanOrEqual(2);
    // the hand-picked cases
    expect(rows[0][2]).not.toBe('-1');
    expect(Math.abs(Number(rows[0][3]))).toBeLessThanOrEqual(1e-12);
    expect(rows[1][2]).toBe('-1');
    expect(rows[2][2]).toBe('-1');
  });

  // --threads: the points split in consecutive ranges over worker threads. Reference for the bytes:
  // the one-thread run (the rule is that every thread count gives the same output); for the values:
  // quadprog (qpReference) on seeded lines written by the worker's range, and the region's own
  // half-spaces checked here.
  it('--threads 2 and 3 and the default (every core) print the bytes of --threads 1 (120 000 points, --clamp, an --at point after the file); the worker-written lines agree with quadprog', async () => {
    const rt = rng(77);
    const many: string[] = [names.theta.join(',')];
    for (let k = 0; k < 120_000; k++) {
      const p = [-3.3 + 6.6 * rt(), -0.88 + 1.76 * rt()];
      // a mix of spellings: shortest decimals (copied), 7 digits, and an exponent form (formatted)
      many.push(k % 7 === 0 ? p.map((v) => v.toExponential(9)).join(',') : k % 3 === 0 ? p.map((v) => v.toPrecision(7)).join(',') : p.join(','));
    }
    const manyFile = join(dir, 'many.csv');
    writeFileSync(manyFile, many.join('\n') + '\n');
    const runs = await runAll(
      {
        one: ['evaluate', tablePath, '--points', manyFile, '--at', '0.5,0.1', '--clamp'],
        two: ['evaluate', tablePath, '--points', manyFile, '--at', '0.5,0.1', '--clamp', '--threads', '2', '--times'],
        three: ['evaluate', tablePath, '--points', manyFile, '--at', '0.5,0.1', '--clamp', '--threads', '3'],
        every: ['evaluate', tablePath, '--points', manyFile, '--at', '0.5,0.1', '--clamp'],
        // the index built with its box LPs shared between the threads is the one a single thread builds
        idx1: ['evaluate', tablePath, '--points', manyFile, '--at', '0.5,0.1', '--clamp', '--threads', '1', '--index', join(dir, 'many-1.index')],
        idx2: ['evaluate', tablePath, '--points', manyFile, '--at', '0.5,0.1', '--clamp', '--threads', '2', '--index', join(dir, 'many-2.index')],
      },
      1,
    );
    for (const k of ['one', 'two', 'three', 'every', 'idx1', 'idx2']) expect(runs[k].status, `${k}: ${runs[k].stderr}`).toBe(0);
    expect(runs.idx1.stdout).toBe(runs.one.stdout);
    expect(runs.idx2.stdout).toBe(runs.one.stdout);
    expect(readFileSync(join(dir, 'many-2.index')).equals(readFileSync(join(dir, 'many-1.index')))).toBe(true);
    expect(runs.two.stdout).toBe(runs.one.stdout);
    expect(runs.three.stdout).toBe(runs.one.stdout);
    expect(runs.every.stdout).toBe(runs.one.stdout);
    // the threaded run says how its threads shared the points (every point counted once)
    const per = /points per thread ([\d, ]+)\n/.exec(runs.two.stderr);
    expect(per, runs.two.stderr).not.toBeNull();
    const counts = per![1].split(', ').map(Number);
    expect(counts).toHaveLength(2);
    expect(counts[0] + counts[1]).toBe(120_000);
    expect(Math.min(...counts)).toBeGreaterThan(10_000);
    // --times names the wait for the workers' lines
    expect(runs.two.stderr).toMatch(/tessera: times .* wait [\d.]+\/[\d.]+; total .* for 120001 points/);
    const table = JSON.parse(readFileSync(tablePath, 'utf8'));
    const lines = runs.two.stdout.trim().split('\n');
    expect(lines).toHaveLength(120_002);
    expect(lines[120_001].startsWith('0.5,0.1,')).toBe(true);
    const lo = -1.5; // positioning-axis input limits (examples/positioning-axis.yaml: |u| ≤ 1.5)
    let checked = 0;
    for (let i = 60_001; i <= 120_001; i += 997) {
      const cells = lines[i].split(',');
      const theta = [Number(cells[0]), Number(cells[1])];
      const region = Number(cells[2]);
      if (region < 0) continue;
      const reg = table.regions[region];
      reg.A.forEach((row: number[], h: number) => expect(row[0] * theta[0] + row[1] * theta[1]).toBeLessThanOrEqual(reg.b[h] + tol.inside));
      const ref = qpReference(axis, theta);
      expect(ref.feasible).toBe(true);
      const want = Math.min(-lo, Math.max(lo, ref.z[0]));
      expect(Math.abs(Number(cells[3]) - want), `θ=${theta}`).toBeLessThanOrEqual(1e-6 * (1 + Math.abs(want)));
      checked++;
    }
    expect(checked).toBeGreaterThan(20);
  }, 120000);

  // the threaded path reads the file in ranges: a line that is not a point, wherever it lies, and a
  // header that does not name θ give the one-thread run's error. Reference: the contract's rule (the
  // first bad line is named, exit 2, nothing on stdout) as the one-thread run applies it.
  it('--threads 2 on a bad points file: the error of --threads 1 (a bad cell late in the file, an unknown header column, too few cells), nothing on stdout', async () => {
    const rt = rng(78);
    const good: string[] = [];
    for (let k = 0; k < 100_000; k++) good.push([-3.3 + 6.6 * rt(), -0.88 + 1.76 * rt()].join(','));
    const files: Record<string, string> = {
      lateCell: [names.theta.join(','), ...good.slice(0, 90_000), '0.5,abc', ...good.slice(90_000)].join('\n') + '\n',
      // in the main thread's range (parsed in chunks by the first worker and the main thread)
      earlyCell: [names.theta.join(','), ...good.slice(0, 20_000), '0.5,abc', ...good.slice(20_000)].join('\n') + '\n',
      header: [`${names.theta[0]},nosuch`, ...good].join('\n') + '\n',
      short: [...good.slice(0, 95_000), '0.25', ...good.slice(95_000)].join('\n') + '\n',
    };
    const jobs: Record<string, string[]> = {};
    for (const [name, text] of Object.entries(files)) {
      const f = join(dir, `bad-${name}.csv`);
      writeFileSync(f, text);
      expect(statSync(f).size).toBeGreaterThan(2 * 2 ** 20); // large enough for two threads
      for (const t of ['1', '2']) jobs[`${name}-${t}`] = ['evaluate', tablePath, '--points', f, '--threads', t];
    }
    const runs = await runAll(jobs, 2);
    for (const name of Object.keys(files)) {
      const one = runs[`${name}-1`];
      const two = runs[`${name}-2`];
      expect(one.status, `${name}: ${one.stderr} ${one.stdout.slice(0, 200)}`).toBe(2);
      expect(two.status).toBe(2);
      expect(two.stderr).toBe(one.stderr);
      expect(two.stdout).toBe('');
      expect(oneLine(one.stderr)).toHaveLength(1);
    }
    expect(runs['lateCell-1'].stderr).toContain('line 90002, column 2');
    expect(runs['earlyCell-1'].stderr).toContain('line 20002, column 2');
    expect(runs['header-1'].stderr).toContain('unknown column "nosuch"');
    expect(runs['short-1'].stderr).toContain('line 95001');
  }, 120000);

  // --index FILE keeps the k-d tree: written on the first run, read on the next, rebuilt when it is
  // another table's (or cut short), refused when the file is not an index. References: the bytes of
  // the run without --index (the option must change nothing) and quadprog (qpReference) for u(0).
  it('--index: written, then read back (no note) with the same bytes as without it; --json too; another table\'s or a cut index is rebuilt; a non-index file is refused and left as it was; u(0) = quadprog', async () => {
    const idx = join(dir, 'axis.index');
    const first = await run(['evaluate', tablePath, '--points', pointsFile, '--index', idx]);
    expect(first.status, first.stderr).toBe(0);
    expect(first.stderr).toContain(`tessera: index ${idx} written`);
    expect(first.stdout).toBe(csv.stdout);
    expect(readFileSync(idx).subarray(0, 16).toString('latin1')).toBe('tessera-index 1\n');
    const runs = await runAll({
      again: ['evaluate', tablePath, '--points', pointsFile, '--index', idx, '--times'],
      // the same problem solved twice is the same bytes, so its index is this one
      sameBytes: ['evaluate', tablePath2, '--points', pointsFile, '--index', idx],
      json: ['evaluate', tablePath, '--points', pointsFile, '--index', idx, '--json'],
      clamp: ['evaluate', tablePath, '--points', pointsFile, '--clamp'],
      clampIdx: ['evaluate', tablePath, '--points', pointsFile, '--clamp', '--index', idx],
    });
    for (const k of Object.keys(runs)) expect(runs[k].status, `${k}: ${runs[k].stderr}`).toBe(0);
    expect(runs.again.stdout).toBe(csv.stdout);
    expect(runs.again.stderr).not.toContain('tessera: index');
    expect(runs.again.stderr).toMatch(/tessera: times .*index [\d.]+\/[\d.]+, locate/);
    // read back, the table is read for its laws only (src/table/evaluate-table.ts)
    expect(runs.again.stderr).toMatch(/tessera: times .*, table and index \(laws only\) [\d.]+\/[\d.]+, table /);
    expect(runs.sameBytes.stdout).toBe(csv.stdout);
    expect(runs.sameBytes.stderr).not.toContain('tessera: index');
    expect(runs.json.stdout).toBe(ev.json.stdout);
    expect(runs.clampIdx.stdout).toBe(runs.clamp.stdout);
    // u(0) of the indexed run against quadprog at every point some region holds
    const rows = runs.again.stdout.trim().split('\n').slice(1).map((l) => l.split(','));
    let checked = 0;
    for (const cells of rows) {
      if (cells[2] === '-1') continue;
      const theta = [Number(cells[0]), Number(cells[1])];
      const ref = qpReference(axis, theta);
      expect(ref.feasible).toBe(true);
      expect(Math.abs(Number(cells[3]) - ref.z[0]), `θ=${theta}`).toBeLessThanOrEqual(1e-6 * (1 + Math.abs(ref.z[0])));
      checked++;
    }
    expect(checked).toBeGreaterThan(40);
    // an index of another table is rebuilt for this one; an index cut short is rebuilt
    const other = join(dir, 'capped.index');
    const capped = await run(['evaluate', cappedPath, '--at', '0,0', '--index', other, '-q']);
    expect(capped.status, capped.stderr).toBe(0);
    expect(capped.stderr).toBe('');
    const swapped = await run(['evaluate', tablePath, '--points', pointsFile, '--index', other]);
    expect(swapped.status, swapped.stderr).toBe(0);
    expect(swapped.stderr).toContain(`tessera: index ${other} rebuilt (it was the index of another table file)`);
    expect(swapped.stdout).toBe(csv.stdout);
    expect(readFileSync(other)).toEqual(readFileSync(idx));
    const cut = join(dir, 'cut.index');
    writeFileSync(cut, readFileSync(idx).subarray(0, readFileSync(idx).length - 100));
    const fromCut = await run(['evaluate', tablePath, '--points', pointsFile, '--index', cut]);
    expect(fromCut.status, fromCut.stderr).toBe(0);
    expect(fromCut.stderr).toMatch(/tessera: index .*cut\.index rebuilt \(array "\w+" runs past the end of the file \(cut short\?\)\)/);
    expect(fromCut.stdout).toBe(csv.stdout);
    // a file that is not an index: exit 2, one line, the file untouched
    const notIndex = join(dir, 'points-copy.index');
    writeFileSync(notIndex, csvBody);
    const refused = await run(['evaluate', tablePath, '--points', pointsFile, '--index', notIndex]);
    expect(refused.status).toBe(2);
    expect(oneLine(refused.stderr)).toHaveLength(1);
    expect(refused.stdout).toBe('');
    expect(readFileSync(notIndex, 'utf8')).toBe(csvBody);
  }, 120000);

  // --index read back: the table is then read for its header and laws only (readTableLaws), which is
  // sound only while the table's bytes are those the index was written for. References: the bytes of
  // the run without --index; a table edited after its index was written is read in full again and its
  // error is the full reader's (one line naming file and key, exit 2, nothing on stdout); a table in
  // another layout (pretty-printed JSON of the same table) takes the full read and gives the same bytes.
  it('--index read back with the laws only: an edited table is read in full (its error, exit 2); another layout of the same table gives the same bytes', async () => {
    const copy = join(dir, 'edit.json');
    const idx = join(dir, 'edit.index');
    writeFileSync(copy, readFileSync(tablePath));
    const first = await run(['evaluate', copy, '--points', pointsFile, '--index', idx, '-q']);
    expect(first.status, first.stderr).toBe(0);
    expect(first.stdout).toBe(csv.stdout);
    // --at alone, the index read back (laws only) and without it: the same line
    const at = csvBody.split('\n')[3];
    const atRuns = await runAll({ idx: ['evaluate', copy, '--at', at, '--index', idx, '-q', '--times'], plain: ['evaluate', copy, '--at', at, '-q'] });
    expect(atRuns.idx.status, atRuns.idx.stderr).toBe(0);
    expect(atRuns.idx.stderr).toContain('table and index (laws only)');
    expect(atRuns.idx.stdout).toBe(atRuns.plain.stdout);
    expect(atRuns.idx.stdout.split('\n')).toHaveLength(3);
    const indexBytes = readFileSync(idx);
    // the second region line loses its law after the index was written
    const lines = readFileSync(copy, 'utf8').split('\n');
    const k = lines.findIndex((l) => l.startsWith('{"id":')) + 1;
    lines[k] = lines[k].replace('"law":', '"lawless":');
    writeFileSync(copy, lines.join('\n'));
    const broken = await run(['evaluate', copy, '--points', pointsFile, '--index', idx]);
    expect(broken.status).toBe(2);
    expect(oneLine(broken.stderr)).toEqual([`tessera: ${copy}: regions[${k - lines.findIndex((l) => l.startsWith('{"id":'))}].law: must map 2 parameters to 1 inputs`]);
    expect(broken.stdout).toBe('');
    expect(readFileSync(idx)).toEqual(indexBytes);
    // pretty-printed: a table file of other bytes, so its own index; read back through the full reader
    const pretty = join(dir, 'pretty.json');
    const prettyIdx = join(dir, 'pretty.index');
    writeFileSync(pretty, JSON.stringify(JSON.parse(readFileSync(tablePath, 'utf8')), null, 2));
    const p1 = await run(['evaluate', pretty, '--points', pointsFile, '--index', prettyIdx]);
    const p2 = await run(['evaluate', pretty, '--points', pointsFile, '--index', prettyIdx, '--times']);
    expect(p1.status, p1.stderr).toBe(0);
    expect(p2.status, p2.stderr).toBe(0);
    expect(p1.stderr).toContain(`tessera: index ${prettyIdx} written`);
    expect(p2.stderr).not.toContain('tessera: index');
    expect(p2.stderr).toMatch(/tessera: times \(wall\/CPU seconds\): start-up [\d.]+\/[\d.]+, table /);
    expect(p1.stdout).toBe(csv.stdout);
    expect(p2.stdout).toBe(csv.stdout);
  }, 120000);

  it('a header line of names in the points file is accepted and changes nothing', () => {
    const h = ev.headed;
    expect(h.status).toBe(0);
    expect(h.stdout).toBe(csv.stdout);
  });

  it('--at 0,0 prints the header and one line, u(0) = 0 (analytic at the origin) = quadprog', () => {
    const a = ev.at;
    expect(a.status).toBe(0);
    const lines = a.stdout.trim().split('\n');
    expect(lines).toHaveLength(2);
    expect(lines[0]).toBe([...names.theta, 'region', ...names.inputs].join(','));
    const cells = lines[1].split(',');
    expect(cells.slice(0, 2)).toEqual(['0', '0']);
    expect(Number(cells[2])).toBeGreaterThanOrEqual(0);
    const ref = qpReference(axis, [0, 0]);
    expect(Math.abs(Number(cells[3]) - ref.z[0])).toBeLessThanOrEqual(1e-6);
    expect(Math.abs(Number(cells[3]))).toBeLessThanOrEqual(1e-12);
  });

  it('--json carries the same regions and u as the CSV, u null when no region holds θ', () => {
    const j = ev.json;
    expect(j.status).toBe(0);
    const out = JSON.parse(j.stdout);
    expect(out.thetaNames).toEqual(names.theta);
    expect(out.inputNames).toEqual(names.inputs);
    expect(out.complete).toBe(true);
    expect(out.points).toHaveLength(points.length);
    const rows = csv.stdout.trim().split('\n').slice(1).map((l) => l.split(','));
    out.points.forEach((p: { theta: number[]; region: number; u: number[] | null }, i: number) => {
      expect(p.theta).toEqual(points[i]);
      expect(p.region).toBe(Number(rows[i][2]));
      if (p.region < 0) expect(p.u).toBeNull();
      else expect(p.u).toEqual([Number(rows[i][3])]);
    });
  });

  const badPoints: { title: string; text: string; key: string; reason: RegExp }[] = [
    { title: 'wrong column count', text: '0,0\n1,2,3\n', key: 'line 2', reason: /expected 2 values.*got 3/ },
    { title: 'too few columns', text: '0,0\n0.5\n', key: 'line 2', reason: /expected 2 values.*got 1/ },
    { title: 'non-number', text: '0,0\n1,abc\n', key: 'line 2, column 2', reason: /"abc" is not a finite number/ },
    { title: 'empty cell', text: '0,0\n,0.1\n', key: 'line 2, column 1', reason: /is not a finite number/ },
    { title: 'infinite value', text: '0,0\nInfinity,0\n', key: 'line 2, column 1', reason: /is not a finite number/ },
    { title: 'header then a non-number', text: 'pos_err,speed\n0,0\n0.1,x\n', key: 'line 3, column 2', reason: /"x" is not a finite number/ },
    // a first line mixing numbers and a typo is a damaged data line, not a header of names (contract:
    // "an optional header line of names"); it must not be dropped silently
    { title: 'first line with a number and a typo', text: '0.5,0.1x\n0,0\n', key: 'line 1, column 2', reason: /"0\.1x" is not a finite number/ },
  ];
  badPoints.forEach((c, i) => {
    it(`bad points file (${c.title}): one line "tessera: <file>: <key>: <reason>", exit 2, nothing on stdout`, () => {
      const f = join(dir, `bad-points-${i}.csv`);
      const b = ev[`bad ${i}`];
      expect(b.status).toBe(2);
      expect(b.stdout).toBe('');
      const lines = oneLine(b.stderr);
      expect(lines).toHaveLength(1);
      const prefix = `tessera: ${f}: ${c.key}: `;
      expect(lines[0].startsWith(prefix), lines[0]).toBe(true);
      expect(lines[0].slice(prefix.length)).toMatch(c.reason);
    });
  });

  it('a missing points file: exit 2, one line naming the file', () => {
    const f = join(dir, 'no-such.csv');
    const b = ev.missing;
    expect(b.status).toBe(2);
    const lines = oneLine(b.stderr);
    expect(lines).toHaveLength(1);
    expect(lines[0].startsWith(`tessera: ${f}: `)).toBe(true);
  });
});
