/**
 * Threads (issue: `solve --threads 2` at least 1.7× faster than 1 thread on 2 cores, the same table).
 *
 * 1. Machine check: a pure arithmetic loop and an allocation loop (one short-lived Float64Array
 *    per step, like the exploration's LP and slice arrays), 1 worker against 2 workers doing
 *    half each. This is what the machine gives right now: the cores are shared with other jobs,
 *    so read the exploration's speed-up against it.
 * 2. Solve, paired in this process: `exploreThreaded` with 1 and with 2 threads (1 and 2 sub-boxes),
 *    alternated (1, 2, 1, 2, …), then the canonical form (`canonicalThreaded`, as `solve` does), on complete problems: fixtures of test/fixtures/scale/ and the mixer on the
 *    central part of its box (the whole one runs for many minutes). Per problem: median wall time of
 *    exploration + canonical form for each, the speed-up (target ≥ 1.7×), the exploration's own
 *    speed-up, the canonical form's seconds, regions built per final region (a region straddling
 *    the cut is built by both sub-boxes), and whether the tables are the same bytes.
 * TESSERA_BENCH_REPS sets the pairs (default 3). Near idle the whole file takes about 3 minutes.
 */
import { join } from 'node:path';
import { readFileSync } from 'node:fs';
import { loadavg } from 'node:os';
import { Worker } from 'node:worker_threads';
import { parseProblem } from '../../src/problem/read.js';
import { buildMpqp } from '../../src/formulation/index.js';
import { canonicalThreaded, exploreThreaded } from '../../src/table/threads.js';
import type { MpqpProblem } from '../../src/mpqp/types.js';

const dir = join(import.meta.dirname, '..', 'fixtures', 'scale');
const reps = Number(process.env.TESSERA_BENCH_REPS ?? 3);

const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];
const load = (): string => loadavg().map((x) => x.toFixed(1)).join(' ');

async function machine(kind: 'arithmetic' | 'allocation'): Promise<number> {
  const body =
    kind === 'arithmetic'
      ? 'let x = 0; for (let i = 0; i < n; i++) x += Math.sqrt(i) * 1e-9; parentPort.postMessage(x);'
      : 'let x = 0; for (let i = 0; i < n; i++) { const a = new Float64Array(40); a[3] = i; x += a[3]; } parentPort.postMessage(x);';
  const code = `const { parentPort, workerData: n } = require('node:worker_threads'); ${body}`;
  const n = kind === 'arithmetic' ? 4e8 : 4e6;
  const go = (k: number) =>
    Promise.all(Array.from({ length: k }, () => new Promise((r) => new Worker(code, { eval: true, workerData: n / k }).on('message', r))));
  const t1: number[] = [];
  const t2: number[] = [];
  for (let r = 0; r < 2; r++) {
    let t = performance.now();
    await go(1);
    t1.push(performance.now() - t);
    t = performance.now();
    await go(2);
    t2.push(performance.now() - t);
  }
  return median(t1) / median(t2);
}

/** A fixture of test/fixtures/scale, its parameter box scaled by `shrink` about the origin. */
function fixture(name: string, shrink = 1): MpqpProblem {
  const raw = JSON.parse(readFileSync(join(dir, `${name}.json`), 'utf8'));
  if (shrink !== 1) {
    raw.parameters.lower = raw.parameters.lower.map((x: number) => x * shrink);
    raw.parameters.upper = raw.parameters.upper.map((x: number) => x * shrink);
  }
  return buildMpqp(parseProblem(raw, name));
}

async function paired(label: string, mpqp: MpqpProblem): Promise<{ label: string; speedup: number }> {
  const total: Record<number, number[]> = { 1: [], 2: [] };
  const explore: Record<number, number[]> = { 1: [], 2: [] };
  const joinS: Record<number, number[]> = { 1: [], 2: [] };
  const bytes: Record<number, string> = {};
  const built: Record<number, number> = {};
  let regions = 0;
  for (let r = 0; r < reps; r++)
    for (const n of [1, 2]) {
      const t = performance.now();
      const run = exploreThreaded(mpqp, { threads: n });
      const p = await run.result;
      const t1 = performance.now();
      const canonical = await canonicalThreaded(mpqp, p, n);
      const t2 = performance.now();
      explore[n].push((t1 - t) / 1000);
      joinS[n].push((t2 - t1) / 1000);
      total[n].push((t2 - t) / 1000);
      regions = canonical.regions.length;
      built[n] = run.built() / regions;
      bytes[n] = JSON.stringify(canonical.regions);
    }
  const s1 = median(total[1]);
  const s2 = median(total[2]);
  const e = median(explore[1]) / median(explore[2]);
  const same = bytes[1] === bytes[2] ? 'yes' : 'NO';
  console.log(
    `  ${label.padEnd(22)} ${String(regions).padStart(6)} regions  1 thread ${s1.toFixed(2).padStart(6)} s  2 threads ${s2.toFixed(2).padStart(6)} s  speed-up ${(s1 / s2).toFixed(2)}×  same bytes: ${same}`,
  );
  console.log(
    `  ${''.padEnd(22)} exploration alone ${e.toFixed(2)}×; canonical form (its neighbours step shared by the threads) ${median(joinS[1]).toFixed(2)} / ${median(joinS[2]).toFixed(2)} s; regions built per final region: 1 thread ${built[1].toFixed(2)}, 2 threads ${built[2].toFixed(2)}`,
  );
  return { label, speedup: s1 / s2 };
}

export async function run(): Promise<void> {
  console.log('Threads bench. The machine has 2 cores shared with other jobs: compare the ratios, and read them against the machine check.');
  console.log(`load average at the start: ${load()} (a speed-up means something only near idle: below ~1)`);
  console.log(`machine check, 2 workers vs 1 (same work): arithmetic ${(await machine('arithmetic')).toFixed(2)}×, typed-array allocation ${(await machine('allocation')).toFixed(2)}×`);
  console.log(`solve = exploration + canonical form, 1 vs 2 threads (1 vs 2 sub-boxes), paired and alternated, median of ${reps}, complete problems:`);
  const results = [];
  results.push(await paired('glider-2d-n40', fixture('glider-2d-n40')));
  results.push(await paired('boom-4d-n8', fixture('boom-4d-n8')));
  results.push(await paired('mixer-5d-n10 (box ×0.3)', fixture('mixer-5d-n10', 0.3)));
  console.log(`load average after the runs: ${load()}`);
  console.log('summary (speed-up of solve, 2 threads vs 1; target ≥ 1.7×):');
  for (const r of results) console.log(`  ${r.label.padEnd(22)} ${r.speedup.toFixed(2)}× ${r.speedup >= 1.7 ? 'meets' : 'BELOW'} the target`);
}
