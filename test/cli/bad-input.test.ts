import { spawn } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { badCases, baseProblem } from '../problem/bad-cases.js';

// Runs the built CLI: `npx tsc -p tsconfig.json` (or `npm test`, which builds first) must have run.
const root = join(import.meta.dirname, '..', '..');
const cli = join(root, 'dist', 'src', 'cli', 'main.js');
const dir = mkdtempSync(join(tmpdir(), 'tessera-cli-bad-'));

interface Run {
  status: number | null;
  stderr: string;
}

function solve(problem: string, out: string): Promise<Run> {
  return new Promise((resolve) => {
    const child = spawn(process.execPath, [cli, 'solve', problem, '-o', out], { stdio: ['ignore', 'ignore', 'pipe'] });
    let stderr = '';
    child.stderr.setEncoding('utf8').on('data', (d: string) => (stderr += d));
    child.on('close', (status) => resolve({ status, stderr }));
  });
}

// The CLI runs are independent processes: start them all up front, a few at a time, and let each case assert its own.
const paths = badCases.map((c, i) => ({ file: join(dir, `case${i}${c.ext}`), out: join(dir, `case${i}.table.json`) }));
const runs: Run[] = [];

beforeAll(async () => {
  if (!existsSync(cli)) throw new Error(`${cli} is missing: run \`npx tsc -p tsconfig.json\` first`);
  badCases.forEach((c, i) => writeFileSync(paths[i].file, c.text));
  let next = 0;
  const worker = async () => {
    while (next < badCases.length) {
      const i = next++;
      runs[i] = await solve(paths[i].file, paths[i].out);
    }
  };
  await Promise.all([worker(), worker(), worker(), worker()]);
}, 120000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('tessera solve on bad problem files', () => {
  it('control: the valid base problem produces a table file', async () => {
    const file = join(dir, 'base.json');
    const out = join(dir, 'base.table.json');
    writeFileSync(file, JSON.stringify(baseProblem()));
    const r = await solve(file, out);
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0);
    expect(existsSync(out)).toBe(true);
  });

  badCases.forEach((c, i) => {
    it(`exit 2, one line on stderr, no output file: ${c.title}`, () => {
      const { file, out } = paths[i];
      const r = runs[i];
      expect(r.status).toBe(2);
      const lines = r.stderr.split('\n').filter((l) => l.length > 0);
      expect(lines.length).toBe(1);
      const prefix = `tessera: ${file}: ${c.key}: `;
      expect(lines[0].startsWith(prefix), lines[0]).toBe(true);
      expect(lines[0].slice(prefix.length)).toMatch(c.reason);
      expect(existsSync(out)).toBe(false);
    });
  });
});
