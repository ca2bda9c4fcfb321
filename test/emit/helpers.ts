/** Shared helpers of the emit tests: example tables solved in-process, and gcc in a temp dir. */
import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtempSync, readdirSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { loadProblem } from '../../src/problem/index.js';
import { buildMpqp } from '../../src/mpqp/condition.js';
import { solvePartition } from '../../src/mpqp/solve.js';
import { makeTable } from '../../src/table/build.js';
import type { TableFile } from '../../src/table/format.js';
import type { MpqpProblem } from '../../src/mpqp/types.js';

/** Every problem file in examples/ (the project's own scenarios). */
export const EXAMPLES = readdirSync(join(import.meta.dirname, '../../examples'))
  .filter((f) => /\.(json|ya?ml)$/i.test(f) && !/\.table\.json$/i.test(f))
  .sort();

const cache = new Map<string, { table: TableFile; mpqp: MpqpProblem }>();

/** Table of examples/<file>, solved with the engine (the same path as `tessera solve`). */
export function exampleTable(file: string): { table: TableFile; mpqp: MpqpProblem } {
  let hit = cache.get(file);
  if (!hit) {
    const loaded = loadProblem(join(import.meta.dirname, '../../examples', file));
    const mpqp = buildMpqp(loaded.model);
    const table = makeTable(loaded, mpqp, solvePartition(mpqp, {}));
    hit = { table, mpqp };
    cache.set(file, hit);
  }
  return hit;
}

/** The strict flags the generated code must pass (the issue's own list). */
export const STRICT = ['-std=c99', '-Wall', '-Wextra', '-Wpedantic', '-Werror', '-O2'];

export function tempDir(tag: string): string {
  return mkdtempSync(join(tmpdir(), `tessera-${tag}-`));
}

/** Write files into a fresh temp dir and compile the listed sources into an executable; returns its path. */
export function compile(tag: string, files: Record<string, string>, sources: string[], extraFlags: string[] = []): { dir: string; exe: string } {
  const dir = tempDir(tag);
  for (const [name, text] of Object.entries(files)) writeFileSync(join(dir, name), text);
  const exe = join(dir, 'prog');
  execFileSync('gcc', [...STRICT, ...extraFlags, '-o', exe, ...sources.map((s) => join(dir, s))], { cwd: dir, stdio: ['ignore', 'pipe', 'pipe'] });
  return { dir, exe };
}

export function run(exe: string): { status: number | null; stdout: string } {
  const r = spawnSync(exe, [], { encoding: 'utf8', maxBuffer: 64 * 1024 * 1024 });
  return { status: r.status, stdout: r.stdout };
}
