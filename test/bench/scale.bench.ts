/**
 * Scaling benchmark (issue: cost per region flat as the table grows).
 *
 * 1. Growth curves: one long exploration per problem of test/fixtures/scale/, sampled as the table
 *    grows (1k, 2k, 4k, … regions): cumulative regions, seconds, regions/s over the last doubling,
 *    LPs/region, QPs/region, resident MB and the process's peak MB so far (the peak includes
 *    earlier sections of this bench: compare growth within one problem); then the log–log slope of time against regions (1 = the
 *    cost per region does not grow with the table). Bounded by TESSERA_BENCH_MAX_REGIONS (default
 *    100 000) and TESSERA_BENCH_SECONDS per problem (default 240).
 * 1b. A family sweep (`family`): one invented problem family solved at growing sizes by cold CLI
 *    processes, per size regions, s, regions/s, LPs/region, QPs/region, peak MB, then the slope.
 * 2. Point location: the grid locator against the sequential scan on the largest table, points/s.
 * 3. Crossing strategies, paired in this process: guess + warm-started QP (default), guess only,
 *    warm QP only, cold point QP at every landing (the earlier method).
 * The machine may be shared: compare the ratios printed here, not absolute numbers across runs.
 */
import { join } from 'node:path';
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { channelProblem, cliStage } from './bigtable.bench.js';
import { loadavg, tmpdir } from 'node:os';
import { loadProblem } from '../../src/problem/index.js';
import { buildMpqp } from '../../src/formulation/index.js';
import { solvePartition } from '../../src/mpqp/solve.js';
import { tableLocator } from '../../src/table/locator.js';
import { locateSequential } from '../../src/table/table.js';
import type { MpqpProblem, Partition, SolveOptions } from '../../src/mpqp/types.js';

const dir = join(import.meta.dirname, '..', 'fixtures', 'scale');
const maxRegions = Number(process.env.TESSERA_BENCH_MAX_REGIONS ?? 100_000);
const seconds = Number(process.env.TESSERA_BENCH_SECONDS ?? 240);

/** Peak resident MB of this process so far (getrusage). */
const peakMb = (): number => process.resourceUsage().maxRSS / 1024;

function problem(name: string): MpqpProblem {
  return buildMpqp(loadProblem(join(dir, `${name}.json`)));
}

function growth(name: string): Partition {
  const mpqp = problem(name);
  const marks: { regions: number; s: number; lps: number; qps: number; mb: number; peak: number }[] = [];
  let next = 1000;
  const t0 = performance.now();
  const p = solvePartition(mpqp, {
    maxRegions,
    timeLimit: seconds,
    onProgress: (q) => {
      if (q.regions < next) return;
      marks.push({ regions: q.regions, s: q.elapsedSeconds, lps: q.lps, qps: q.qps, mb: process.memoryUsage().rss / 2 ** 20, peak: peakMb() });
      while (next <= q.regions) next *= 2;
    },
  });
  const total = (performance.now() - t0) / 1000;
  marks.push({ regions: p.stats.regions, s: total, lps: p.stats.lps, qps: p.stats.qps, mb: process.memoryUsage().rss / 2 ** 20, peak: peakMb() });
  console.log(`\n${name}: θ ${mpqp.ntheta}-D, ${mpqp.nc} rows, ${mpqp.nz} moves; stopped: ${p.stats.stopReason}, unresolved pieces ${p.stats.unresolvedPieces}`);
  console.log(`  load average ${loadavg()[0].toFixed(1)} at the start`);
  console.log('  regions        s   regions/s (last doubling)   LPs/region   QPs/region   RSS MB   peak MB (process)');
  let prev = { regions: 0, s: 0 };
  for (const m of marks) {
    const rate = (m.regions - prev.regions) / Math.max(m.s - prev.s, 1e-9);
    console.log(
      `  ${String(m.regions).padStart(7)} ${m.s.toFixed(2).padStart(8)} ${rate.toFixed(0).padStart(11)}                 ${(m.lps / m.regions).toFixed(1).padStart(8)} ${(m.qps / m.regions).toFixed(2).padStart(12)} ${m.mb.toFixed(0).padStart(8)} ${m.peak.toFixed(0).padStart(9)}`,
    );
    prev = m;
  }
  const pts = marks.filter((m) => m.regions >= 1000 && m.s > 0);
  if (pts.length >= 2) {
    const a = pts[0];
    const b = pts[pts.length - 1];
    const slope = Math.log(b.s / a.s) / Math.log(b.regions / a.regions);
    const costA = a.s / a.regions;
    const costB = (b.s - a.s) / (b.regions - a.regions);
    console.log(`  log–log slope of time vs regions (${a.regions} → ${b.regions}): ${slope.toFixed(2)} (target ≤ 1.1); cost per region at the end / at ${a.regions}: ${(costB / costA).toFixed(2)}×`);
  }
  if (p.work) console.log(`  work: ${JSON.stringify(p.work)}`);
  const warm = p.stats.regions / total;
  const target = mpqp.ntheta <= 2 ? 5000 : 2000;
  const cold = coldCli(name);
  console.log(
    `  throughput: warm (in this process) ${warm.toFixed(0)} regions/s, cold CLI ${cold} — target ≥ ${target} regions/s per core (${mpqp.ntheta}-D); peak RSS ${(process.resourceUsage().maxRSS / 1024).toFixed(0)} MB`,
  );
  return p;
}

/** The CLI from a cold start on the same problem (built dist/, same region bound, 1/4 of the time bound): its printed regions/s. */
function coldCli(name: string): string {
  const cli = join(import.meta.dirname, '..', '..', 'dist', 'src', 'cli', 'main.js');
  const out = mkdtempSync(join(tmpdir(), 'tessera-scale-'));
  try {
    const r = spawnSync(process.execPath, [cli, 'solve', join(dir, `${name}.json`), '--lean', '--max-regions', String(Math.min(maxRegions, 20000)), '--time-limit', String(Math.max(10, seconds / 4)), '-o', join(out, 't.json')], { encoding: 'utf8' });
    const m = /(\d+) regions, .* ([\d.]+) s \((\d+) regions\/s\)/.exec(r.stdout);
    return m ? `${m[3]} regions/s (${m[1]} regions in ${m[2]} s, --lean)` : `not measured (exit ${r.status}: ${r.stderr.trim().split('\n')[0] ?? ''})`;
  } finally {
    rmSync(out, { recursive: true, force: true });
  }
}

function locateBench(p: Partition, mpqp: MpqpProblem): void {
  const regions = p.regions;
  const t0 = performance.now();
  const loc = tableLocator(regions, mpqp.box.lower, mpqp.box.upper);
  const build = (performance.now() - t0) / 1000;
  let s = 0x1234567;
  const rnd = (): number => {
    s = (Math.imul(s, 1103515245) + 12345) >>> 0;
    return s / 4294967296;
  };
  const nt = mpqp.ntheta;
  const N = 200_000;
  const pts = new Float64Array(N * nt);
  for (let i = 0; i < N * nt; i++) pts[i] = mpqp.box.lower[i % nt] + rnd() * (mpqp.box.upper[i % nt] - mpqp.box.lower[i % nt]);
  const th = new Float64Array(nt);
  let found = 0;
  const t1 = performance.now();
  for (let i = 0; i < N; i++) {
    for (let j = 0; j < nt; j++) th[j] = pts[i * nt + j];
    if (loc.locate(th) >= 0) found++;
  }
  const grid = N / ((performance.now() - t1) / 1000);
  const M = 2000;
  let same = 0;
  const t2 = performance.now();
  for (let i = 0; i < M; i++) {
    for (let j = 0; j < nt; j++) th[j] = pts[i * nt + j];
    if (locateSequential(regions, th) === loc.locate(th)) same++;
  }
  const seq = M / ((performance.now() - t2) / 1000);
  console.log(
    `\npoint location on ${regions.length} regions (${nt}-D): grid ${(grid / 1e6).toFixed(2)} M points/s (index built in ${build.toFixed(2)} s), sequential ${(seq / 1e3).toFixed(1)} k points/s, ratio ${(grid / seq).toFixed(0)}×; ${found} of ${N} points in a region; same answer on ${same}/${M}`,
  );
}

function strategies(name: string, limit: number): void {
  const mpqp = problem(name);
  const variants: [string, SolveOptions['strategy']][] = [
    ['guess + warm QP', { guess: true, warmStart: true }],
    ['guess + cold QP', { guess: true, warmStart: false }],
    ['warm QP only', { guess: false, warmStart: true }],
    ['cold QP only', { guess: false, warmStart: false }],
  ];
  console.log(`\ncrossing strategies on ${name} (first ${limit} regions, two rounds, order reversed in the second):`);
  const rows = new Map<string, number[]>();
  for (const round of [0, 1]) {
    const order = round === 0 ? variants : [...variants].reverse();
    for (const [label, strategy] of order) {
      const t0 = performance.now();
      const p = solvePartition(mpqp, { maxRegions: limit, strategy });
      const s = (performance.now() - t0) / 1000;
      const r = p.stats.regions;
      rows.set(label, [...(rows.get(label) ?? []), s]);
      if (round === 1)
        console.log(
          `  ${label.padEnd(16)} ${r} regions  LPs/region ${(p.stats.lps / r).toFixed(1).padStart(5)}  QPs/region ${(p.stats.qps / r).toFixed(2)}  candidates/region ${(p.stats.candidates / r).toFixed(2)}  s ${rows.get(label)!.map((x) => x.toFixed(2)).join(' / ')}`,
        );
    }
  }
  const base = Math.min(...rows.get('cold QP only')!);
  for (const [label, t] of rows) console.log(`  ${label.padEnd(16)} time vs cold QP only: ${(Math.min(...t) / base).toFixed(2)}`);
}

/**
 * One problem family swept in size: the bank of m saturating channels over a 3-D θ (invented, see
 * bigtable.bench.ts; ≈ 0.46·m³ regions), each size a cold `tessera solve --lean --threads 1` under
 * /usr/bin/time: regions, seconds, regions/s, LPs/region, QPs/region (the CLI's summary line) and
 * peak MB, then the log–log slope of time against regions. Sizes grow until the next would not fit
 * in TESSERA_BENCH_FAMILY_SECONDS (default 1 200) or pass TESSERA_BENCH_MAX_REGIONS.
 */
function family(): void {
  const budget = Number(process.env.TESSERA_BENCH_FAMILY_SECONDS ?? 1200);
  if (!existsSync('/usr/bin/time')) {
    console.log('\nfamily sweep: skipped (/usr/bin/time is not installed)');
    return;
  }
  const out = mkdtempSync(join(tmpdir(), 'tessera-family-'));
  console.log(`\nfamily sweep: channel bank over a 3-D θ, one cold CLI solve per size, ${budget} s in all; load average ${loadavg()[0].toFixed(1)}`);
  console.log('  channels  regions        s  regions/s  LPs/region  QPs/region  peak MB');
  const rows: { regions: number; s: number }[] = [];
  let used = 0;
  try {
    for (const m of [13, 18, 25, 35, 48, 62, 80]) {
      const expected = 0.46 * m ** 3;
      if (expected > maxRegions * 1.2) break;
      // the last size took rows[−1].s; assume time grows like the regions
      const last = rows[rows.length - 1];
      if (last && used + (last.s * expected) / last.regions > budget) break;
      const file = join(out, `channels-${m}.json`);
      writeFileSync(file, JSON.stringify(channelProblem(m, 3)));
      const r = cliStage(['solve', file, '--lean', '--threads', '1', '--time-limit', String(Math.max(10, budget - used)), '-o', join(out, 't.json')]);
      used += r.s;
      const sm = /(\d+) regions, (\d+) candidates, (\d+) LPs, (\d+) point QPs, ([\d.]+) s/.exec(r.out);
      if (!sm) {
        console.log(`  ${String(m).padStart(8)}  not measured (exit ${r.status}): ${r.out.trim().split('\n')[0]}`);
        break;
      }
      const [regions, , lps, qps] = sm.slice(1, 5).map(Number);
      rows.push({ regions, s: r.s });
      console.log(
        `  ${String(m).padStart(8)} ${String(regions).padStart(8)} ${r.s.toFixed(1).padStart(8)} ${(regions / r.s).toFixed(0).padStart(10)} ${(lps / regions).toFixed(1).padStart(11)} ${(qps / regions).toFixed(2).padStart(11)} ${r.mb.toFixed(0).padStart(8)}${/complete: yes/.test(r.out) ? '' : '  (incomplete: time limit)'}`,
      );
    }
  } finally {
    rmSync(out, { recursive: true, force: true });
  }
  const big = rows.filter((x) => x.regions >= 800);
  if (big.length >= 2) {
    const a = big[0];
    const b = big[big.length - 1];
    console.log(`  log–log slope of time vs regions (${a.regions} → ${b.regions}, wall time of the whole CLI run): ${(Math.log(b.s / a.s) / Math.log(b.regions / a.regions)).toFixed(2)} (target ≤ 1.1)`);
  }
}

export async function run(): Promise<void> {
  console.log(`max regions ${maxRegions}, ${seconds} s per problem; load average ${(await import('node:os')).loadavg().map((x) => x.toFixed(1)).join(' ')}`);
  // TESSERA_BENCH_ONLY=family runs only the family sweep
  if (process.env.TESSERA_BENCH_ONLY === 'family') return family();
  family();
  strategies('glider-2d-n40', 1500);
  strategies('boom-4d-n8', 1500);
  const big2 = growth('glider-2d-n40');
  locateBench(big2, problem('glider-2d-n40'));
  const big4 = growth('boom-4d-n20');
  locateBench(big4, problem('boom-4d-n20'));
  growth('mixer-5d-n10');
}
