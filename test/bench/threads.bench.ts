/**
 * Threads and parts (issue: every core used, splittable across machines).
 *
 * 1. Machine check: a pure arithmetic loop and an allocation loop (one short-lived Float64Array
 *    per step, like the exploration's LP and slice arrays), 1 worker against 2 workers doing
 *    half each. This is what the machine gives right now: the cores are shared with other jobs,
 *    so read the exploration's speed-up against it.
 * 2. Exploration, paired in this process: `exploreThreaded` with 1 and with 2 threads,
 *    alternated (1, 2, 1, 2, …), on fixtures of test/fixtures/scale/ bounded by a region count;
 *    median wall time of each, speed-up, and whether the canonical tables are the same bytes.
 * 3. Parts: the sum of the regions k sub-box parts list (a region cut by a sub-box face is listed
 *    by every part it meets) over the regions of the whole, and the largest part's share: the
 *    overhead of splitting across machines.
 * TESSERA_BENCH_THREADS_REGIONS bounds each run (default 1500), TESSERA_BENCH_REPS the pairs (default 3).
 */
import { join } from 'node:path';
import { loadavg } from 'node:os';
import { Worker } from 'node:worker_threads';
import { loadProblem } from '../../src/problem/index.js';
import { buildMpqp } from '../../src/formulation/index.js';
import { solvePartition } from '../../src/mpqp/solve.js';
import { joinPartitions, subBox } from '../../src/mpqp/canonical.js';
import { exploreThreaded } from '../../src/table/threads.js';
import type { MpqpProblem } from '../../src/mpqp/types.js';

const dir = join(import.meta.dirname, '..', 'fixtures', 'scale');
const maxRegions = Number(process.env.TESSERA_BENCH_THREADS_REGIONS ?? 1500);
const reps = Number(process.env.TESSERA_BENCH_REPS ?? 3);

const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];

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

async function paired(name: string, mpqp: MpqpProblem): Promise<void> {
  const times: Record<number, number[]> = { 1: [], 2: [] };
  const bytes: Record<number, string> = {};
  const work: Record<number, string> = {};
  let regions = 0;
  for (let r = 0; r < reps; r++)
    for (const n of [1, 2]) {
      const t = performance.now();
      const p = await exploreThreaded(mpqp, { threads: n, maxRegions }).result;
      times[n].push((performance.now() - t) / 1000);
      regions = p.stats.regions;
      work[n] = `cand/region ${(p.stats.candidates / regions).toFixed(2)} landings/region ${((p.work?.landings ?? 0) / regions).toFixed(2)}`;
      if (p.stats.complete) bytes[n] = JSON.stringify(joinPartitions(mpqp, [p]).regions);
    }
  const s1 = median(times[1]);
  const s2 = median(times[2]);
  const same = bytes[1] === undefined ? 'n/a (bounded run)' : bytes[1] === bytes[2] ? 'yes' : 'NO';
  console.log(
    `  ${name.padEnd(14)} ${String(regions).padStart(6)} regions  1 thread ${s1.toFixed(2).padStart(7)} s  2 threads ${s2.toFixed(2).padStart(7)} s  speed-up ${(s1 / s2).toFixed(2)}  same bytes: ${same}`,
  );
  console.log(`  ${''.padEnd(14)} 1 thread: ${work[1]}; 2 threads: ${work[2]} (duplicated builds and extra landings are the threads' own overhead)`);
}

function parts(name: string, mpqp: MpqpProblem): void {
  const whole = joinPartitions(mpqp, [solvePartition(mpqp)]).regions.length;
  const line: string[] = [];
  for (const k of [2, 4]) {
    const ps = Array.from({ length: k }, (_, i) => solvePartition(mpqp, { within: subBox(mpqp.box, i, k) }));
    const listed = ps.reduce((s, p) => s + p.regions.length, 0);
    const largest = Math.max(...ps.map((p) => p.regions.length));
    const same = joinPartitions(mpqp, ps).regions.length === whole;
    line.push(`k=${k}: listed/whole ${(listed / whole).toFixed(2)}, largest part ${(largest / whole).toFixed(2)} of the whole${same ? '' : ' (JOIN DIFFERS)'}`);
  }
  console.log(`  ${name.padEnd(14)} ${String(whole).padStart(6)} regions  ${line.join('  ')}`);
}

export async function run(): Promise<void> {
  const load = (): string => loadavg().map((x) => x.toFixed(1)).join(' ');
  console.log('Threads bench. The machine has 2 cores shared with other jobs: compare the ratios, and read them against the machine check.');
  console.log(`load average at the start: ${load()} (a speed-up means something only near idle: below ~1)`);
  console.log(`machine check, 2 workers vs 1 (same work): arithmetic ${(await machine('arithmetic')).toFixed(2)}×, typed-array allocation ${(await machine('allocation')).toFixed(2)}×`);
  console.log(`exploration, 1 vs 2 threads, paired and alternated, median of ${reps}, at most ${maxRegions} regions:`);
  for (const name of ['boom-4d-n8', 'glider-2d-n40', 'mixer-5d-n10']) await paired(name, buildMpqp(loadProblem(join(dir, `${name}.json`))));
  console.log(`load average after the explorations: ${load()}`);
  console.log('parts (--part i/k), whole problems:');
  for (const name of ['boom-4d-n8']) parts(name, buildMpqp(loadProblem(join(dir, `${name}.json`))));
}
