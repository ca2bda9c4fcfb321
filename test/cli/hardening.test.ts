/**
 * Issue "every path ends in a right answer or a clear message": the right answers. Through the built
 * CLI (dist/src/cli/main.js). References: quadprog (Goldfarb–Idnani dual method, via
 * test/helpers/reference.ts) for u(0); the contract's `tessera evaluate` header rule; gcc for the
 * generated C; saturation min(max(u, lower), upper) (common practice).
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, readdirSync, rmSync, utimesSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { parseProblem } from '../../src/problem/index.js';
import { buildMpqp } from '../../src/formulation/index.js';
import { mergedRowLabel } from '../../src/mpqp/labels.js';
import { writeProbeReason } from '../../src/io/output.js';
import { qpReference } from '../helpers/reference.js';
import { rng } from '../problem/rng.js';
import { motorProblem, motorWideProblem } from './scenarios.js';
import { builtCli as cli, runCli } from '../helpers/cli.js';

// each case runs the CLI a few times on a shared 2-core machine
vi.setConfig({ testTimeout: 60000 });

const root = join(import.meta.dirname, '..', '..');
const dir = mkdtempSync(join(tmpdir(), 'tessera-hardening-'));
const P = join(dir, 'motor.json');
const T = join(dir, 'motor.table.json');
const PW = join(dir, 'wide.json');
const TW = join(dir, 'wide.table.json');
const PS = join(dir, 'short.json');
const TS = join(dir, 'short.table.json');

const run = (args: string[]) => runCli(args, { cwd: dir });

beforeAll(async () => {
  if (!existsSync(cli)) throw new Error(`${cli} is missing: run \`npx tsc -p tsconfig.json\` first`);
  writeFileSync(P, JSON.stringify(motorProblem()));
  writeFileSync(PW, JSON.stringify(motorWideProblem()));
  // control horizon 2 of 8: u(k) = u(1) for k ≥ 1, so the input rows of k = 1…7 coincide and merge
  writeFileSync(PS, JSON.stringify(motorProblem((p) => (p.controlHorizon = 2))));
  const made = await Promise.all([run(['solve', P, '-o', T]), run(['solve', PW, '-o', TW]), run(['solve', PS, '-o', TS])]);
  for (const m of made) if (m.status !== 0) throw new Error(m.stderr);
}, 120000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const table = () => JSON.parse(readFileSync(T, 'utf8'));

describe('evaluate: the header names the columns (contract, `tessera evaluate`)', () => {
  it('a header in another order than θ is matched by name', async () => {
    // θ = [omega, current]; the file gives current first
    const pts = join(dir, 'swapped.csv');
    writeFileSync(pts, 'current,omega\n0.3,-1.2\n-0.5,2\n');
    const r = await run(['evaluate', T, '--points', pts, '--json']);
    expect(r.status).toBe(0);
    const out = JSON.parse(r.stdout) as { points: { theta: number[]; u: number[] }[] };
    expect(out.points.map((p) => p.theta)).toEqual([[-1.2, 0.3], [2, -0.5]]);
    // u(0) at θ = (omega, current) from quadprog on the same mpQP
    const mpqp = buildMpqp(parseProblem(motorProblem(), 'motor.json'));
    out.points.forEach((p) => {
      const ref = qpReference(mpqp, p.theta);
      expect(ref.feasible).toBe(true);
      expect(p.u[0]).toBeCloseTo(ref.z[0], 6);
    });
  });
});

describe('--clamp saturates to the input limits', () => {
  it('evaluate --clamp: never past ±1, equal to min(max(u, −1), 1) of the unclamped value', async () => {
    const r = rng(9);
    const lines = ['omega,current'];
    for (let k = 0; k < 400; k++) lines.push(`${(-3 + 6 * r()).toFixed(6)},${(-1 + 2 * r()).toFixed(6)}`);
    const pts = join(dir, 'many.csv');
    writeFileSync(pts, lines.join('\n') + '\n');
    const [plain, clamped] = await Promise.all([run(['evaluate', T, '--points', pts, '--json']), run(['evaluate', T, '--points', pts, '--json', '--clamp'])]);
    const a = JSON.parse(plain.stdout).points as { u: number[] | null }[];
    const b = JSON.parse(clamped.stdout);
    expect(b.clamped).toBe(true);
    let saturated = 0;
    a.forEach((p, k) => {
      const u = b.points[k].u as number[] | null;
      if (!p.u) return expect(u).toBeNull();
      expect(u![0]).toBe(Math.min(Math.max(p.u[0], -1), 1));
      expect(Math.abs(u![0])).toBeLessThanOrEqual(1);
      if (Math.abs(p.u[0]) >= 1 - 1e-9) saturated++;
    });
    expect(saturated, 'the sample reaches the saturated regions').toBeGreaterThan(20);
    // without --clamp a saturated law is off by rounding at some point (the reason for --clamp)
    expect(a.some((p) => p.u && Math.abs(p.u[0]) > 1)).toBe(true);
  });

  it('emit --clamp: the generated C saturates (gcc self-test), the report carries the cost', async () => {
    const out = join(dir, 'c-clamp');
    const rep = join(dir, 'clamp-report.json');
    const r = await run(['emit', T, '-o', out, '--clamp', '--selftest', '300', '--report', rep, '--precision', 'double']);
    expect(r.status).toBe(0);
    expect(r.stdout).toMatch(/u clamped to the input limits/);
    expect(r.stdout).toMatch(/comparisons \(2 of them for --clamp\)/);
    const src = readFileSync(join(out, 'tessera_law.c'), 'utf8');
    expect(src).toContain('if (u[0] < -1.0000000000000000) { u[0] = -1.0000000000000000; }');
    expect(src).toContain('if (u[0] > 1.0000000000000000) { u[0] = 1.0000000000000000; }');
    const report = JSON.parse(readFileSync(rep, 'utf8'));
    expect(report.clamp).toEqual({ limits: { lower: [-1], upper: [1] }, comparisons: 2 });
    expect(report.cost.clampComparisons).toBe(2);
    const plain = await run(['emit', T, '-o', join(dir, 'c-plain'), '--report', join(dir, 'plain-report.json'), '--precision', 'double', '-q']);
    expect(plain.status).toBe(0);
    expect(report.cost.worstComparisons).toBe(JSON.parse(readFileSync(join(dir, 'plain-report.json'), 'utf8')).cost.worstComparisons + 2);
    // the self-test compares the C with the TypeScript evaluator of the clamped build; every u is within ±1
    const exe = join(dir, 'selftest');
    const gcc = spawnSync('gcc', ['-std=c99', '-Wall', '-Wextra', '-Wpedantic', '-Werror', '-ffp-contract=off', '-o', exe, join(out, 'tessera_law.c'), join(out, 'tessera_law_selftest.c')], { encoding: 'utf8' });
    expect(gcc.status, gcc.stderr).toBe(0);
    const st = spawnSync(exe, [], { encoding: 'utf8' });
    expect(st.status).toBe(0);
    expect(st.stdout).toMatch(/selftest: 300 points, 0 mismatches/);
    const us = st.stdout.split('\n').filter((l) => /^\d+ \d+ /.test(l)).map((l) => Number(l.split(' ')[2]));
    expect(us.length).toBeGreaterThan(100);
    for (const u of us) expect(Math.abs(u)).toBeLessThanOrEqual(1);
  });
});

describe('simulate --clamp', () => {
  it('the applied input stays within ±1 and equals the saturated table law', async () => {
    const [plain, clamped] = await Promise.all(
      ['plain', 'clamped'].map((k) => run(['simulate', T, '--x0', '2.5,0', '--steps', '30', '--csv', join(dir, `sim-${k}.csv`), '-q', ...(k === 'clamped' ? ['--clamp'] : [])])),
    );
    expect(plain.status).toBe(0);
    expect(clamped.status).toBe(0);
    const rows = (k: string) => {
      const [head, ...lines] = readFileSync(join(dir, `sim-${k}.csv`), 'utf8').trim().split('\n');
      const col = head.split(',').indexOf('volt');
      return lines.map((l) => Number(l.split(',')[col]));
    };
    const u = rows('clamped');
    expect(u.length).toBe(30); // steps 0…29
    for (const v of u) expect(Math.abs(v)).toBeLessThanOrEqual(1);
    expect(u.filter((v) => Math.abs(v) === 1).length, 'the run starts saturated').toBeGreaterThan(0);
    // same loop without the clamp, to rounding (saturation moves u by at most a few ulps here)
    rows('plain').forEach((v, k) => expect(u[k]).toBeCloseTo(Math.min(Math.max(v, -1), 1), 9));
  });
});

describe('emit: what is written and what is certified', () => {
  it('says that NAME.tree.json is written and explains the leaf size', async () => {
    const r = await run(['emit', T, '--search', 'tree', '-o', join(dir, 'c-tree')]); // tree named: the default is now auto (changed on purpose)
    expect(r.status).toBe(0);
    expect(r.stdout).toMatch(/also tessera_law\.tree\.json in .*c-tree: the search tree, for reuse with --tree \(not needed by the C code\)/);
    expect(r.stdout).toMatch(/at most \d+ regions? per leaf \(--leaf-size 1( is the split target; a leaf keeps more regions when no facet hyperplane separates them)?\)/);
    expect(existsSync(join(dir, 'c-tree', 'tessera_law.tree.json'))).toBe(true);
  });
  it('--certify with --precision double certifies the double build, and --help gives the tolerance rule', async () => {
    const rep = join(dir, 'double-report.json');
    const r = await run(['emit', T, '-o', join(dir, 'c-d'), '--precision', 'double', '--certify', '--samples', '500', '--report', rep]);
    expect(r.status).toBe(0);
    expect(r.stdout).toMatch(/double certificate on \d+ points/);
    expect(r.stdout).not.toMatch(/use the double build/);
    expect(JSON.parse(readFileSync(rep, 'utf8')).certificate.precision).toBe('double');
    const h = await run(['emit', '--help']);
    expect(h.stdout.replace(/\s+/g, ' ')).toContain('default for float/double: 0.00001 × the widest finite input range (max over inputs of upper − lower limit), or 0.00001 when no input has both limits');
  });
});

describe('map', () => {
  it('--heat u: the scale comes only from laws at points of their own regions (within the ±1 limits)', async () => {
    const svg = join(dir, 'heat.svg');
    const r = await run(['map', TW, '--heat', 'volt', '-o', svg]);
    expect(r.status).toBe(0);
    const text = readFileSync(svg, 'utf8');
    // the legend's tick labels (d3 prints − for minus)
    const legend = text.slice(text.indexOf('<g class="legend">'));
    const ticks = [...legend.matchAll(/text-anchor="middle" font-size="11">([^<]+)</g)].map((m) => Number(m[1].replace('−', '-')));
    expect(ticks.length).toBeGreaterThan(2);
    for (const t of ticks) expect(Math.abs(t)).toBeLessThanOrEqual(1);
    const m = /class="heat-scale" data-min="([^"]+)" data-max="([^"]+)"/.exec(text);
    expect(m).not.toBeNull();
    expect(Number(m![1])).toBeGreaterThanOrEqual(-1 - 1e-9);
    expect(Number(m![2])).toBeLessThanOrEqual(1 + 1e-9);
    expect(Number(m![2]) - Number(m![1])).toBeGreaterThan(1.9); // both saturations are on the map
  });

  it('--window draws a part of the slice; border widths shrink with region thickness', async () => {
    const full = join(dir, 'full.svg');
    const win = join(dir, 'win.svg');
    const [a, b] = await Promise.all([run(['map', TW, '-o', full]), run(['map', TW, '--window', '-4:4,-0.5:0.5', '-o', win])]);
    expect(a.status).toBe(0);
    expect(b.status).toBe(0);
    expect(b.stdout).toMatch(/slice omega × current \(window -4:4,-0.5:0.5\)/);
    const count = (s: string) => Number(/(\d+) regions cut the plane/.exec(s)![1]);
    expect(count(b.stdout)).toBeLessThan(count(a.stdout));
    const text = readFileSync(win, 'utf8');
    expect(text).toContain('window omega ∈ [−4, 4], current ∈ [−0.5, 0.5]'); // d3 prints − for minus
    // x ticks of the window only
    const xt = [...text.matchAll(/<text x="[\d.]+" y="\d+" text-anchor="middle">([^<]+)</g)].map((m) => Number(m[1].replace('−', '-')));
    expect(Math.min(...xt)).toBeGreaterThanOrEqual(-4);
    expect(Math.max(...xt)).toBeLessThanOrEqual(4);
    // thin regions get thin borders: the full map has regions thinner than 8 px
    const widths = [...readFileSync(full, 'utf8').matchAll(/class="region"[^>]*stroke-width="([\d.]+)"/g)].map((m) => Number(m[1]));
    expect(Math.max(...widths)).toBe(0.6);
    expect(Math.min(...widths)).toBeLessThan(0.3);
  });
});

describe('labels of merged constraint rows', () => {
  it('identical rows read as one limit over its steps, not as a chain of inequalities', () => {
    // hand-written expectations
    expect(mergedRowLabel(['pump(2) <= 1', 'pump(3) <= 1', 'pump(4) <= 1'])).toBe('pump <= 1 at k = 2, 3, 4');
    expect(mergedRowLabel(['u1(1) <= 1', 'u1(2) <= 1', 'u1(3) <= 1', 'u1(4) <= 1', 'u1(6) <= 1'])).toBe('u1 <= 1 at k = 1…4, 6');
    expect(mergedRowLabel(['x1(2) >= -5', 'y1(2) >= -5'])).toBe('x1 >= -5 at k = 2 and y1 >= -5 at k = 2');
  });
  it('in a solved table with a short control horizon', () => {
    const t = JSON.parse(readFileSync(TS, 'utf8')) as { constraints: string[] };
    expect(t.constraints).toContain('volt <= 1 at k = 1…7');
    expect(t.constraints).toContain('volt >= -1 at k = 1…7');
    for (const c of t.constraints) expect(c).not.toMatch(/\) (<=|>=) [^ ]+ = /);
  });
});

describe('one vocabulary across commands', () => {
  it('every command takes -q/--quiet and then prints nothing but its data', async () => {
    const runs = await Promise.all([
      run(['solve', P, '-o', join(dir, 'q.table.json'), '-q']),
      run(['evaluate', T, '--at', '0.1,0.2', '-q']),
      run(['emit', T, '-o', join(dir, 'q-c'), '-q']),
      run(['map', T, '-o', join(dir, 'q.svg'), '-q']),
      run(['gaps', T, '-q', '--samples', '500']),
      run(['view', T, '-o', join(dir, 'q.html'), '-q']),
      run(['simulate', T, '--x0', '0.5,0', '--steps', '5', '-q']),
    ]);
    runs.forEach((r) => {
      expect(r.status).toBe(0);
      expect(r.stderr).toBe('');
    });
    expect(runs.map((r) => r.stdout)).toEqual(['', expect.stringMatching(/^omega,current,region,volt\n0\.1,0\.2,\d+,-?[\d.e-]+\n$/), '', '', '', '', '']);
  });
  it('gaps takes the problem file as --problem, like map and view (the argument still works)', async () => {
    const [a, b] = await Promise.all([run(['gaps', T, '--problem', P, '--samples', '500']), run(['gaps', T, P, '--samples', '500'])]);
    expect(a.status).toBe(0);
    expect(a.stdout).toBe(b.stdout);
    expect(a.stdout).toMatch(/no holes found/);
  });
  it('--colour is accepted as --color; every time limit is written <seconds>', async () => {
    const r = await run(['map', T, '--colour', 'active', '-o', join(dir, 'colour.svg')]);
    expect(r.status).toBe(0);
    const helps = await Promise.all(['solve', 'gaps'].map((c) => run([c, '--help'])));
    for (const h of helps) expect(h.stdout).toMatch(/--time-limit <seconds>/);
    expect((await run(['map', '--help'])).stdout).toMatch(/--color <scheme> +colour regions by law \| active \| region \(also spelt\s+--colour\)/);
  });
});

describe('exit codes are documented', () => {
  it('in `tessera --help` and in the README, with the same meanings', async () => {
    const h = await run(['--help']);
    expect(h.status).toBe(0);
    const readme = readFileSync(join(root, 'README.md'), 'utf8');
    for (const [code, words] of [['0', 'done'], ['1', 'the check found a problem'], ['2', 'usage or input error'], ['3', 'internal error'], ['130', 'interrupted']]) {
      expect(h.stdout).toMatch(new RegExp(`^ {2}${code} +${words}`, 'm'));
      expect(readme).toMatch(new RegExp(`\\| \`${code}\` \\| ${words}`));
    }
  });
});

describe('write probe reasons', () => {
  // a read-only file system cannot be mounted in the test sandbox: the reason text is checked directly
  it('names a read-only file system, a permission problem and a full disk', () => {
    expect(writeProbeReason('EROFS', '/mnt/ro')).toBe('/mnt/ro is on a read-only file system');
    expect(writeProbeReason('EACCES', '/x')).toBe('no permission to write in /x');
    expect(writeProbeReason('ENOSPC', '/x')).toBe('no space left in /x');
  });
});

describe('a write killed half-way leaves a temp file that the next write of the same file removes', () => {
  // The leftover is made for real: a separate Node process writes T's name through the project's
  // atomic writer (dist/src/io/atomic.js) and is killed with SIGKILL between two chunks, so the
  // temp file holds a partial text and its process is gone. POSIX kill(pid, 0) answering ESRCH
  // for a process that no longer exists is the outside reference for "dead" (common practice).
  it('dead writer + older than a minute: removed by `solve -o`; a fresh one and a live writer\'s are kept', async () => {
    const out = join(dir, 'stale', 't.json');
    const atomic = join(root, 'dist', 'src', 'io', 'atomic.js');
    const kill = spawnSync(
      process.execPath,
      [
        '--input-type=module',
        '-e',
        `import { writeFileAtomicChunks } from ${JSON.stringify(atomic)};
         function* chunks() { yield 'x'.repeat(100); process.kill(process.pid, 'SIGKILL'); }
         writeFileAtomicChunks(${JSON.stringify(out)}, chunks(), 10);`,
      ],
      { encoding: 'utf8' },
    );
    expect(kill.signal).toBe('SIGKILL');
    const temps = () => readdirSync(join(dir, 'stale')).filter((f) => f.endsWith('.tmp')).sort();
    const [left] = temps();
    expect(left).toMatch(new RegExp(`^\\.t\\.json\\.${kill.pid}\\.\\d+\\.tmp$`));
    expect(readFileSync(join(dir, 'stale', left), 'utf8')).toBe('x'.repeat(100));
    // a live writer's temp (this test's own pid) and a dead one's that is fresh
    const live = `.t.json.${process.pid}.1.tmp`;
    writeFileSync(join(dir, 'stale', live), 'y');
    const old = (Date.now() - 120_000) / 1000;
    utimesSync(join(dir, 'stale', live), old, old);
    // first write: the dead writer's file is younger than a minute, so it stays
    const r1 = await run(['solve', P, '-o', out]);
    expect(r1.status, r1.stderr).toBe(0);
    expect(temps()).toEqual([left, live].sort());
    // once it is older than a minute it goes; the live writer's stays however old it is
    utimesSync(join(dir, 'stale', left), old, old);
    const r2 = await run(['solve', P, '-o', out]);
    expect(r2.status, r2.stderr).toBe(0);
    expect(temps()).toEqual([live]);
    expect(readFileSync(out, 'utf8')).toBe(readFileSync(T, 'utf8'));
  });
});
