import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { loadProblem } from '../../src/problem/index.js';
import { estimateCondensedSize } from '../../src/problem/size.js';
import { buildRawMpqp } from '../../src/formulation/index.js';
import { exampleFiles, fixtureFiles } from '../helpers/solved.js';

// The set-up guard of `tessera solve`: the condensed size is estimated from the dimensions before
// anything is built. References: the row count N·(finite limits per step) is how a condensed MPC
// is laid out (common practice); the memory of a dense nc×nc matrix is 8·nc² bytes (common practice).
const root = join(import.meta.dirname, '..', '..');
const cli = join(root, 'dist', 'src', 'cli', 'main.js');
const dir = mkdtempSync(join(tmpdir(), 'tessera-guard-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const longHorizon = {
  name: 'long-glider',
  description: 'Double integrator with a horizon far too long for an explicit table (invented numbers).',
  plant: { A: [[1, 0.1], [0, 1]], B: [[0.005], [0.1]] },
  horizon: 10000,
  weights: { state: [[1, 0], [0, 0.1]], input: [[0.1]] },
  constraints: { input: { lower: [-1], upper: [1] }, state: { lower: [-5, -2], upper: [5, 2] } },
  parameters: { lower: [-4, -1], upper: [4, 1] },
};

function solve(args: string[]) {
  return spawnSync(process.execPath, [cli, 'solve', ...args], { encoding: 'utf8', timeout: 120_000 });
}

describe('set-up size guard', () => {
  it('counts n_z and the rows exactly on every example and fixture', () => {
    for (const f of [...exampleFiles, ...fixtureFiles]) {
      const model = loadProblem(f).model;
      if (!model) continue; // an mpQP given directly: nothing to estimate
      const est = estimateCondensedSize(model);
      const raw = buildRawMpqp(model);
      // limits on u, Δu, x, y are all there is without slacks, a terminal set or a target
      const plain = !model.soft.state && !model.soft.output && !model.tracking;
      if (plain) expect(est.nz, f).toBe(raw.nz);
      if (plain) expect(est.rows, f).toBe(raw.nc);
      expect(est.rows, f).toBeLessThanOrEqual(raw.nc);
      expect(est.bytes, f).toBeGreaterThan(8 * raw.nc * raw.nc);
    }
  });

  it('refuses a horizon of 10 000 at once (exit 2, one line naming the file and key, nothing written)', () => {
    const p = join(dir, 'long.json');
    writeFileSync(p, JSON.stringify(longHorizon));
    const out = join(dir, 'long.table.json');
    const t0 = Date.now();
    const r = solve([p, '-o', out]);
    expect(r.status).toBe(2);
    expect(Date.now() - t0).toBeLessThan(60_000);
    const line = r.stderr.trim();
    expect(line.split('\n')).toHaveLength(1);
    expect(line).toContain(p);
    expect(line).toContain('horizon');
    expect(line).toMatch(/n_z = 10000, 60000 constraint rows, about [\d.]+ GiB/);
    expect(line).toContain('--force');
    expect(existsSync(out)).toBe(false);
  });

  it('--setup-limit refuses a small problem above it and --force goes on with a warning', () => {
    const p = join(root, 'examples', 'positioning-axis.yaml');
    const out = join(dir, 'axis.table.json');
    const refused = solve([p, '-o', out, '--setup-limit', '0.01']);
    expect(refused.status).toBe(2);
    expect(refused.stderr).toContain('--setup-limit of 0.01 MiB');
    expect(existsSync(out)).toBe(false);
    const forced = solve([p, '-o', out, '--setup-limit', '0.01', '--force']);
    expect(forced.status).toBe(0);
    expect(forced.stderr).toContain('going on because of --force');
    expect(JSON.parse(readFileSync(out, 'utf8')).stats.complete).toBe(true);
    const bad = solve([p, '-o', out, '--setup-limit', '-3']);
    expect(bad.status).toBe(2);
    expect(bad.stderr).toContain('--setup-limit');
  });
});
