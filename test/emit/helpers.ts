/** Shared helpers of the emit tests: example tables solved in-process, and gcc in a temp dir. */
import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { afterAll } from 'vitest';
import { createHash } from 'node:crypto';
import { tmpdir } from 'node:os';
import { isAbsolute, join } from 'node:path';
import { formulate, loadProblem, solveProblem, writeFileAtomic, type MpqpProblem, type TableFile } from '../../src/index.js';

/** Every problem file in examples/ (the project's own scenarios). */
export const EXAMPLES = readdirSync(join(import.meta.dirname, '../../examples'))
  .filter((f) => /\.(json|ya?ml)$/i.test(f) && !/\.table\.json$/i.test(f))
  .sort();

/**
 * Examples too large for the one-region-per-leaf hyperplane tree: on the 4-D crane table it grows
 * to millions of nodes (the blow-up the capped and box trees replace). The tree, merge and
 * tree/sequential self-test suites skip them; test/emit/locate.test.ts covers every example.
 */
export const LARGE_EXAMPLES = ['crane-trolley-4d.json'];
/** Every example but the large ones. */
export const TREE_EXAMPLES = EXAMPLES.filter((f) => !LARGE_EXAMPLES.includes(f));

const cache = new Map<string, { table: TableFile; mpqp: MpqpProblem }>();

/** sha256 of every engine source file: a cached table is reused only while the engine is unchanged. */
function engineHash(): string {
  const h = createHash('sha256');
  const walk = (dir: string): void => {
    for (const e of readdirSync(dir, { withFileTypes: true }).sort((a, b) => a.name.localeCompare(b.name))) {
      const p = join(dir, e.name);
      if (e.isDirectory()) walk(p);
      else if (e.name.endsWith('.ts')) h.update(p).update(readFileSync(p));
    }
  };
  walk(join(import.meta.dirname, '../../src'));
  return h.digest('hex');
}

/**
 * Table of examples/<file>, solved with the engine (the same path as `tessera solve`). The test
 * files run in separate workers, so the solved table is kept in os.tmpdir() keyed by the problem
 * text and the engine sources, and solved again whenever either changes.
 */
export function exampleTable(file: string): { table: TableFile; mpqp: MpqpProblem } {
  let hit = cache.get(file);
  if (!hit) {
    const path = isAbsolute(file) ? file : join(import.meta.dirname, '../../examples', file);
    const loaded = loadProblem(path);
    const formulation = formulate(loaded);
    const { mpqp } = formulation;
    const problemKey = createHash('sha256').update(path).update(readFileSync(path)).digest('hex').slice(0, 16);
    const stem = `tessera-emit-test-${problemKey}-`;
    const cached = join(tmpdir(), `${stem}${engineHash().slice(0, 16)}.table.json`);
    let table: TableFile;
    if (existsSync(cached)) table = JSON.parse(readFileSync(cached, 'utf8')) as TableFile;
    else {
      table = solveProblem(loaded).table;
      // drop tables of this problem solved by an older engine
      for (const f of readdirSync(tmpdir())) if (f.startsWith(stem) && f.endsWith('.table.json')) rmSync(join(tmpdir(), f), { force: true });
      writeFileAtomic(cached, JSON.stringify(table));
    }
    hit = { table, mpqp };
    cache.set(file, hit);
  }
  return hit;
}

/** Every problem file in test/fixtures/problems, as absolute paths. */
export const FIXTURES = readdirSync(join(import.meta.dirname, '../fixtures/problems'))
  .filter((f) => /\.(json|ya?ml)$/i.test(f))
  .sort()
  .map((f) => join(import.meta.dirname, '../fixtures/problems', f));

/** The strict flags the generated code must pass (the issue's own list). */
export const STRICT = ['-std=c99', '-Wall', '-Wextra', '-Wpedantic', '-Werror', '-O2'];

const madeDirs: string[] = [];
// temp dirs of this test file are removed when it ends (set TESSERA_KEEP_TMP=1 to inspect them)
afterAll(() => {
  if (process.env.TESSERA_KEEP_TMP) return;
  for (const d of madeDirs.splice(0)) rmSync(d, { recursive: true, force: true });
});

export function tempDir(tag: string): string {
  const d = mkdtempSync(join(tmpdir(), `tessera-${tag}-`));
  madeDirs.push(d);
  return d;
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
