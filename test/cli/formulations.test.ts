/** The formulation features end to end through the built CLI (dist/src/cli/main.js): solve, evaluate, gaps, map, emit. */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { steadyStateTarget } from '../../src/formulation/index.js';
import { loadProblem } from '../../src/problem/index.js';

const root = join(import.meta.dirname, '..', '..');
const cli = join(root, 'dist', 'src', 'cli', 'main.js');
const dir = mkdtempSync(join(tmpdir(), 'tessera-form-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function tessera(args: string[]): { status: number | null; stdout: string; stderr: string } {
  const r = spawnSync(process.execPath, [cli, ...args], { encoding: 'utf8' });
  return { status: r.status, stdout: r.stdout, stderr: r.stderr };
}

describe('tracking + disturbance through the CLI', () => {
  const problem = join(root, 'examples', 'greenhouse-offset-free.json');
  const table = join(dir, 'gh.table.json');

  it('solve prints the formulation and writes a table whose layout names every θ block', () => {
    const r = tessera(['solve', problem, '-o', table]);
    expect(r.status, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/θ = \[air, soil, air_temp_ref, load\], u = \[heat\], tracking, 5 free moves/);
    const t = JSON.parse(readFileSync(table, 'utf8'));
    expect(t.layout.theta.map((b: { kind: string }) => b.kind)).toEqual(['state', 'reference', 'disturbance']);
  }, 60_000);

  it('evaluate --at: at the steady-state target the law returns u_s (the loop rests there; common practice)', () => {
    const model = loadProblem(problem).model!;
    const r = [1.2];
    const d = [0.5];
    const { xs, us } = steadyStateTarget(model, r, d);
    const out = tessera(['evaluate', table, '--json', '--at', [...xs, ...r, ...d].join(',')]);
    expect(out.status, out.stderr).toBe(0);
    const j = JSON.parse(out.stdout);
    expect(j.points[0].region).toBeGreaterThanOrEqual(0);
    expect(j.points[0].u[0]).toBeCloseTo(us[0], 8);
  }, 60_000);

  it('map takes reference and disturbance entries by name; emit documents θ block by block', () => {
    const svg = join(dir, 'gh.svg');
    const m = tessera(['map', table, '--axes', 'air,air_temp_ref', '--fix', 'load=0.5', '-o', svg, '--trajectories', join(dir, 'none.csv')]);
    expect(m.status).toBe(2); // missing trajectories file: input error, no SVG
    expect(existsSync(svg)).toBe(false);
    const m2 = tessera(['map', table, '--axes', 'air,air_temp_ref', '--fix', 'load=0.5', '-o', svg]);
    expect(m2.status, m2.stderr).toBe(0);
    expect(m2.stdout).toMatch(/slice air × air_temp_ref/);
    const out = join(dir, 'gen');
    const e = tessera(['emit', table, '-o', out, '--prefix', 'gh']);
    expect(e.status, e.stderr).toBe(0);
    const h = readFileSync(join(out, 'gh.h'), 'utf8');
    expect(h).toMatch(/theta\[0\.\.1\]: measured \(or estimated\) state x\(0\)/);
    expect(h).toMatch(/theta\[2\]: reference r of the tracked outputs/);
    expect(h).toMatch(/theta\[3\]: disturbance d/);
    expect(h).toMatch(/theta\[3\] = load, box \[-1, 1\]/);
  }, 120_000);
});

describe('soft limits and terminal set through the CLI', () => {
  it('soft: gaps reports 0 % infeasible with only input limits hard; evaluate --json shows the slack values', () => {
    const table = join(dir, 'motor.table.json');
    const s = tessera(['solve', join(root, 'examples', 'motor-soft-speed.json'), '-o', table]);
    expect(s.status, s.stderr).toBe(0);
    expect(s.stdout).toMatch(/5 free moves, 2 state slacks/);
    const g = tessera(['gaps', table]);
    expect(g.status, g.stderr).toBe(0);
    expect(g.stdout).toMatch(/infeasible\s+0\.000 %/);
    expect(g.stdout).toMatch(/infeasible 0 \(0\.0000 %\)/); // exact polygon areas (2-D θ)
    // inside the limits the slacks are 0; from a state far beyond the speed limit the prediction must violate it
    const pts = join(dir, 'motor-points.csv');
    writeFileSync(pts, '0.1,0\n1.6,1.5\n');
    const e = tessera(['evaluate', table, '--json', '--points', pts]);
    expect(e.status, e.stderr).toBe(0);
    const j = JSON.parse(e.stdout);
    expect(Object.keys(j.points[0].slacks)).toEqual(['speed_slack', 'current_slack']);
    expect(Math.abs(j.points[0].slacks.speed_slack)).toBeLessThan(1e-9);
    expect(j.points[1].slacks.speed_slack).toBeGreaterThan(0.1);
  }, 120_000);

  it('terminal set: solve prints its row count and determination index', () => {
    const s = tessera(['solve', join(root, 'examples', 'sway-damper-terminal-set.json'), '-o', join(dir, 'sway.table.json')]);
    expect(s.status, s.stderr).toBe(0);
    expect(s.stdout).toMatch(/terminal set 16 rows \(determination index 7\)/);
  }, 60_000);
});
