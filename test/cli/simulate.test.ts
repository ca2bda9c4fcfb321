/**
 * `tessera simulate` end to end through the built CLI (dist/src/cli/main.js). Every option is used
 * here. References: quadprog (Goldfarb–Idnani, via test/helpers/reference.ts qpReference) for the
 * input at every CSV row; the plant update x⁺ = A x + B u recomputed here from the problem's
 * matrices (common practice); jsdom parses the SVG.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { JSDOM } from 'jsdom';
import { root, solved } from '../helpers/solved.js';
import { qpReference } from '../helpers/reference.js';
import { tableToJson } from '../../src/table/table.js';

const cli = join(root, 'dist', 'src', 'cli', 'main.js');
const dir = mkdtempSync(join(tmpdir(), 'tessera-simulate-'));
const axisFile = join(root, 'examples', 'positioning-axis.yaml');
const rateFile = join(root, 'test', 'fixtures', 'problems', 'rate-limited.json');
const axisTable = join(dir, 'axis.json');
const rateTable = join(dir, 'rate.json');
const shiftedTable = join(dir, 'shifted.json');
const mpqpTable = join(dir, 'mpqp.json');
const hoistFile = join(root, 'examples', 'hoist-setpoint.json');
const greenFile = join(root, 'examples', 'greenhouse-offset-free.json');
const motorFile = join(root, 'examples', 'motor-soft-speed.json');
const hoistTable = join(dir, 'hoist.json');
const greenTable = join(dir, 'green.json');
const motorTable = join(dir, 'motor.json');

function run(args: string[]) {
  const r = spawnSync(process.execPath, [cli, 'simulate', ...args], { encoding: 'utf8' });
  return { status: r.status, stdout: r.stdout, stderr: r.stderr };
}
const csvRows = (file: string) =>
  readFileSync(file, 'utf8')
    .trim()
    .split('\n')
    .map((l) => l.split(','));

beforeAll(() => {
  expect(existsSync(cli), 'build first: npx tsc -p tsconfig.json').toBe(true);
  const axis = solved(axisFile).table;
  writeFileSync(axisTable, tableToJson(axis));
  writeFileSync(rateTable, tableToJson(solved(rateFile).table));
  writeFileSync(hoistTable, tableToJson(solved(hoistFile).table));
  writeFileSync(greenTable, tableToJson(solved(greenFile).table));
  writeFileSync(motorTable, tableToJson(solved(motorFile).table));
  // every law shifted by +0.4: the loop then pushes the force past its limit 1.5
  writeFileSync(shiftedTable, tableToJson({ ...axis, regions: axis.regions.map((r) => ({ ...r, law: { F: r.law.F, g: r.law.g.map((g) => g + 0.4) } })) }));
  writeFileSync(mpqpTable, tableToJson({ ...axis, layout: { ...axis.layout, formulation: 'mpqp', theta: [{ kind: 'parameter', offset: 0, size: 2, names: axis.thetaNames, refersTo: [0, 1] }] } }));
}, 120000);

describe('tessera simulate', { timeout: 120000 }, () => {
  it('--x0, --steps, --csv, --svg: the CSV follows the plant, each input is the online QP (quadprog) at that row', () => {
    const csv = join(dir, 'x0.csv');
    const svg = join(dir, 'x0.svg');
    const r = run([axisTable, '--x0', '2,-0.3', '--steps', '30', '--csv', csv, '--svg', svg]);
    expect(r.status, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/1 closed-loop run × 30 steps on the nominal plant/);
    expect(r.stdout).toMatch(/hard-limit violations: 0/);
    const rows = csvRows(csv);
    expect(rows[0]).toEqual(['run', 'step', 'pos_err', 'speed', 'y_y1', 'y_y2', 'region', 'force', 'force_online', 'du_max']);
    expect(rows.length).toBe(31);
    const s = solved(axisFile);
    const { A, B } = s.loaded.model;
    rows.slice(1).forEach((row, k) => {
      const x = [Number(row[2]), Number(row[3])];
      const u = Number(row[7]);
      expect(Math.abs(u - qpReference(s.mpqp, x).z[0])).toBeLessThan(1e-7);
      if (k + 2 < rows.length) {
        const nx = [Number(rows[k + 2][2]), Number(rows[k + 2][3])];
        nx.forEach((v, i) => expect(v).toBeCloseTo(A[i][0] * x[0] + A[i][1] * x[1] + B[i][0] * u, 12));
      }
    });
    expect(rows[1].slice(2, 4).map(Number)).toEqual([2, -0.3]);
    const doc = new JSDOM(readFileSync(svg, 'utf8'), { contentType: 'image/svg+xml' }).window.document;
    // pos_err, speed, force (outputs equal the states and are not repeated)
    expect(doc.querySelectorAll('g.panel').length).toBe(3);
    // speed ±0.6 and force ±1.5
    expect(doc.querySelectorAll('line.limit').length).toBe(4);
    expect(doc.querySelectorAll('path.run').length).toBe(3);
    expect(doc.querySelectorAll('path.online').length).toBe(1);
  });

  it('--initial (with a header), --json', () => {
    const init = join(dir, 'init.csv');
    writeFileSync(init, 'pos_err,speed\n1,0\n-2,0.2\n# comment\n0.5,-0.1\n');
    const r = run([axisTable, '--initial', init, '--json', '--steps', '20']);
    expect(r.status, r.stderr).toBe(0);
    const j = JSON.parse(r.stdout);
    expect(j.summary.runs).toBe(3);
    expect(j.summary.steps).toBe(20);
    expect(j.summary.maxDu).toBeLessThan(1e-7);
    expect(j.failed).toBe(false);
  });

  it('--samples and --seed: seeded starts, reproducible, another seed gives other starts', () => {
    const out = (seed: string, name: string) => {
      const f = join(dir, name);
      const r = run([axisTable, '--samples', '4', '--seed', seed, '--steps', '10', '--csv', f]);
      expect(r.status, r.stderr).toBe(0);
      expect(r.stdout).toMatch(/4 closed-loop runs/);
      return readFileSync(f, 'utf8');
    };
    const a = out('5', 's5a.csv');
    expect(out('5', 's5b.csv')).toBe(a);
    expect(out('6', 's6.csv')).not.toBe(a);
    // default: 8 sampled runs
    expect(run([axisTable, '--steps', '5']).stdout).toMatch(/8 closed-loop runs/);
  });

  it('--noise: seeded measurement noise changes the inputs; one value or one per state', () => {
    const go = (extra: string[], name: string) => {
      const f = join(dir, name);
      const r = run([axisTable, '--x0', '1,0', '--steps', '15', '--csv', f, ...extra]);
      expect(r.status, r.stderr).toBe(0);
      return readFileSync(f, 'utf8');
    };
    const clean = go([], 'n0.csv');
    const noisy = go(['--noise', '0.02', '--seed', '2'], 'n1.csv');
    // noise runs are reported, not judged: the noisy loop nudges speed past −0.6 (see the summary) yet exits 0
    expect(noisy).not.toBe(clean);
    expect(go(['--noise', '0.02', '--seed', '2'], 'n2.csv')).toBe(noisy);
    expect(go(['--noise', '0,0'], 'n3.csv')).toBe(clean);
  });

  it('--plant: a true plant with a stronger input gain moves differently and is reported as mismatch', () => {
    const raw = structuredClone(solved(axisFile).loaded.raw) as { plant: { B: number[][] } };
    raw.plant.B = [[0.0018], [0.072]];
    const plantFile = join(dir, 'true-plant.json');
    writeFileSync(plantFile, JSON.stringify(raw));
    const f = join(dir, 'mis.csv');
    const r = run([axisTable, '--x0', '2,0', '--steps', '10', '--plant', plantFile, '--csv', f]);
    expect(r.status, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/model mismatch/);
    const rows = csvRows(f);
    // x(1) = A x(0) + B_true u(0)
    const u0 = Number(rows[1][7]);
    expect(Number(rows[2][3])).toBeCloseTo(0.985 * 0 + 0.072 * u0, 12);
  });

  it('θ with the previous input: --x0 takes x(0) or x(0), u_prev(0)', () => {
    const f = join(dir, 'rate.csv');
    const r = run([rateTable, '--x0', '0.4,0.5', '--steps', '12', '--csv', f]);
    expect(r.status, r.stderr).toBe(0);
    const rows = csvRows(f);
    expect(rows[0]).toEqual(['run', 'step', 'x1', 'y_y1', 'region', 'u1', 'u1_online', 'du_max']);
    // the rate limit |Δu| ≤ 0.2 from u_prev = 0.5
    expect(Math.abs(Number(rows[1][5]) - 0.5)).toBeLessThanOrEqual(0.2 + 1e-9);
    const s = solved(rateFile);
    expect(Number(rows[1][5])).toBeCloseTo(qpReference(s.mpqp, [0.4, 0.5]).z[0], 7);
    expect(run([rateTable, '--x0', '0.4', '--steps', '3']).status).toBe(0);
  });

  it('exit 1: a table that breaks a hard limit, or starts in no region, on the nominal plant', () => {
    const r = run([shiftedTable, '--x0', '-2.5,0', '--steps', '30']);
    expect(r.status).toBe(1);
    expect(r.stdout).toMatch(/force <= 1\.5: \d+ step/);
    expect(r.stdout).toMatch(/FAIL/);
    const out = run([axisTable, '--x0', '0,0.79', '--steps', '5']);
    expect(out.status).toBe(1);
    expect(out.stdout).toMatch(/steps with no region: [1-9]/);
    // on a "true" plant the same loop is reported, not failed (exit 1 is for the nominal plant)
    const rawFile = join(dir, 'same-plant.json');
    writeFileSync(rawFile, JSON.stringify(solved(axisFile).loaded.raw));
    const mis = run([shiftedTable, '--x0', '-2.5,0', '--steps', '30', '--plant', rawFile]);
    expect(mis.status).toBe(0);
    expect(mis.stdout).toMatch(/force <= 1\.5/);
  });

  it('--reference constant and scheduled: the reference column follows it, y reaches r (tracking table)', () => {
    const f = join(dir, 'hoist.csv');
    const r = run([hoistTable, '--x0', '0,0', '--reference', '1.2', '--steps', '120', '--csv', f]);
    expect(r.status, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/steady-state offset \|y − r\| at the end \(max over runs\): height_m \d/);
    const rows = csvRows(f);
    expect(rows[0]).toEqual(['run', 'step', 'height', 'speed', 'y_height_m', 'region', 'torque', 'torque_online', 'du_max', 'height_m_ref']);
    const last = rows[rows.length - 1];
    expect(Math.abs(Number(last[4]) - 1.2)).toBeLessThan(1e-5);
    const s = solved(hoistFile);
    rows.slice(1, 20).forEach((row) => expect(Math.abs(Number(row[6]) - qpReference(s.mpqp, [Number(row[2]), Number(row[3]), 1.2]).z[0])).toBeLessThan(1e-7));
    const sched = join(dir, 'ref.csv');
    writeFileSync(sched, 'step,height_m_ref\n0,0.5\n40,-0.5\n');
    const g = join(dir, 'hoist2.csv');
    expect(run([hoistTable, '--x0', '0,0', '--reference', sched, '--steps', '80', '--csv', g]).status).toBe(0);
    const rows2 = csvRows(g);
    expect(rows2[40][9]).toBe('0.5');
    expect(rows2[41][9]).toBe('-0.5');
  });

  it('--disturbance constant and scheduled (offset-free table): y reaches r under the load', () => {
    const f = join(dir, 'green.csv');
    const r = run([greenTable, '--x0', '0,0', '--reference', '1', '--disturbance', '0.5', '--steps', '100', '--csv', f]);
    expect(r.status, r.stderr).toBe(0);
    const rows = csvRows(f);
    expect(rows[0].slice(-2)).toEqual(['air_temp_ref', 'load']);
    expect(Math.abs(Number(rows[rows.length - 1][4]) - 1)).toBeLessThan(1e-5);
    const sched = join(dir, 'load.csv');
    writeFileSync(sched, '0,0\n10,0.8\n');
    const g = join(dir, 'green2.csv');
    expect(run([greenTable, '--x0', '0,0', '--reference', '1', '--disturbance', sched, '--steps', '150', '--csv', g]).status).toBe(0);
    const rows2 = csvRows(g);
    expect(rows2[10].at(-1)).toBe('0');
    expect(rows2[11].at(-1)).toBe('0.8');
    expect(Math.abs(Number(rows2[rows2.length - 1][4]) - 1)).toBeLessThan(1e-5);
  });

  it('soft limits: excursions are reported apart and do not fail the run', () => {
    const r = run([motorTable, '--x0', '1.5,0', '--steps', '30']);
    expect(r.status, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/hard-limit violations: 0/);
    expect(r.stdout).toMatch(/soft-limit excursions \(allowed, paid for in the cost\): [1-9]/);
  });

  it('bad reference/disturbance input: exit 2, one line', () => {
    const s0 = join(dir, 'late.csv');
    writeFileSync(s0, '3,0.5\n');
    const s1 = join(dir, 'back.csv');
    writeFileSync(s1, '0,0.5\n10,0\n5,0.2\n');
    const cases: [string, string[], RegExp][] = [
      [hoistTable, [], /--reference: the table tracks 1 output\(s\) \(height_m_ref\); give --reference/],
      [hoistTable, ['--reference', '5'], /--reference: height_m_ref = 5 lies outside the table's box \[-1\.5, 1\.5\]/],
      [hoistTable, ['--reference', '1,2'], /--reference: expected 1 value\(s\) \(height_m_ref\), got 2/],
      [hoistTable, ['--reference', s0], /late\.csv: line 1: the schedule must start at step 0, got 3/],
      [hoistTable, ['--reference', s1], /back\.csv: line 3: steps must increase \(5 after 10\)/],
      [greenTable, ['--reference', '1', '--disturbance', '2'], /--disturbance: load = 2 lies outside the table's box/],
    ];
    for (const [table, args, re] of cases) {
      const r = run([table, '--x0', '0,0', ...args]);
      expect(r.status, `${args.join(' ')}: ${r.stderr}`).toBe(2);
      expect(r.stderr.trim().split('\n').length).toBe(1);
      expect(r.stderr).toMatch(re);
    }
  });

  it('bad input: one line naming file, key and reason, exit 2, no output file', () => {
    const init = join(dir, 'bad-init.csv');
    writeFileSync(init, '1,0\n1,zz\n');
    const wrongPlant = join(root, 'test', 'fixtures', 'problems', 'scalar-saturated.json');
    const cases: [string[], RegExp][] = [
      [['--x0', '1'], /--x0: expected 2 values \(x\(0\)\), got 1/],
      [['--x0', 'a,b'], /--x0: not a list of finite numbers/],
      [['--noise', '-1'], /--noise: expected one non-negative standard deviation or 2/],
      [['--noise', '1,2,3'], /--noise/],
      [['--steps', '0'], /--steps: expected a positive integer/],
      [['--samples', '0'], /--samples: expected a positive integer/],
      [['--seed', 'x'], /--seed: expected a non-negative integer/],
      [['--initial', join(dir, 'nope.csv')], /nope\.csv: cannot read initial states/],
      [['--initial', init], /bad-init\.csv: line 2: not a list of finite numbers: "1,zz"/],
      [['--plant', wrongPlant], /scalar-saturated\.json: plant: has n=1, m=1, p=1; the table's plant has n=2/],
      [['--reference', '0.5'], /--reference: the table has no reference block/],
      [['--disturbance', '0.5'], /--disturbance: the table has no disturbance block/],
    ];
    for (const [args, re] of cases) {
      const csv = join(dir, 'never.csv');
      const r = run([axisTable, ...args, '--csv', csv]);
      expect(r.status, `${args.join(' ')}: ${r.stderr}`).toBe(2);
      expect(r.stderr.trim().split('\n').length).toBe(1);
      expect(r.stderr).toMatch(re);
      expect(existsSync(csv)).toBe(false);
    }
    const m = run([mpqpTable]);
    expect(m.status).toBe(2);
    expect(m.stderr).toMatch(/mpqp\.json: layout: this table holds a directly given mpQP: it has no plant to simulate/);
    const missing = run([join(dir, 'missing.json')]);
    expect(missing.status).toBe(2);
    expect(missing.stderr).toMatch(/missing\.json: cannot read table file/);
  });
});
