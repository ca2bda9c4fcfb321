import { readdirSync } from 'node:fs';
import { join } from 'node:path';
import { loadProblem } from '../../src/problem/index.js';
import { formulate } from '../../src/formulation/index.js';
import { solvePartition } from '../../src/mpqp/solve.js';
import { makeTable } from '../../src/table/build.js';
import { checkTable, tableToJson } from '../../src/table/table.js';
import type { TableFile } from '../../src/table/format.js';
import type { MpqpProblem, Partition } from '../../src/mpqp/types.js';
import type { LoadedProblem } from '../../src/problem/types.js';

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
  const loaded = loadProblem(file);
  const formulation = formulate(loaded);
  const { mpqp } = formulation;
  const partition = solvePartition(mpqp);
  const table = checkTable(JSON.parse(tableToJson(makeTable(loaded, formulation, partition))), file);
  const s = { loaded, mpqp, partition, table };
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
