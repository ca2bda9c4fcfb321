import { readdirSync } from 'node:fs';
import { join } from 'node:path';
import { loadProblem, parseTableJson, solveProblem, tableToJson, type LoadedProblem, type MpqpProblem, type Partition, type TableFile } from '../../src/index.js';

export const root = join(import.meta.dirname, '..', '..');
/**
 * Example problems solved by the engine suites. The 4-D crane example (a few thousand regions, a
 * minute or more to solve on a loaded machine) is left to the emit suites, which cache its table
 * (test/emit/helpers.ts); test/problem/examples.test.ts still checks its problem file.
 */
export const exampleFiles = readdirSync(join(root, 'examples'))
  .filter((f) => /\.(json|ya?ml)$/.test(f) && f !== 'crane-trolley-4d.json')
  .map((f) => join(root, 'examples', f));
export const fixtureFiles = readdirSync(join(root, 'test', 'fixtures', 'problems'))
  .filter((f) => /\.(json|ya?ml)$/.test(f))
  .map((f) => join(root, 'test', 'fixtures', 'problems', f));

export interface Solved {
  loaded: LoadedProblem;
  mpqp: MpqpProblem;
  partition: Partition;
  /** the table after a full write/read round trip */
  table: TableFile;
}

const cache = new Map<string, Solved>();

/** Solve a problem file once per test process and round-trip its table through JSON. */
export function solved(file: string): Solved {
  const hit = cache.get(file);
  if (hit) return hit;
  const { loaded, mpqp, partition, table: built } = solveProblem(loadProblem(file));
  const s = { loaded, mpqp, partition, table: parseTableJson(tableToJson(built), file) };
  cache.set(file, s);
  return s;
}

/** Seeded uniform generator (Park–Miller minimal standard). */
export function rng(seed: number): () => number {
  let s = seed % 2147483647 || 1;
  return () => {
    s = (s * 16807) % 2147483647;
    return s / 2147483647;
  };
}

export function randomInBox(box: { lower: ArrayLike<number>; upper: ArrayLike<number> }, rnd: () => number): number[] {
  return Array.from(box.lower, (l, j) => l + rnd() * (box.upper[j] - l));
}
