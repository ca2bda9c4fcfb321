/**
 * Large tables (issue: tables that scale). `npm run bench -- bigtable`.
 *
 * 1. Table size per region, full against lean, on the 4-D and 5-D fixtures (first
 *    TESSERA_BENCH_SIZE_REGIONS regions, default 3 000; the first N regions do not depend on N).
 * 2. Evaluation speed on a ~6k-region table (boom-4d-n12, first TESSERA_BENCH_EVAL_REGIONS = 6 000
 *    regions, lean): index build seconds, points/s of the bare locator (`locateAt` on packed points,
 *    the locate step of `tessera evaluate`, target ≥ 10⁶ points/s warm; and `locate`, which also
 *    reports the residual) and of `evaluateTable` on 10⁶ seeded points; then the whole CSV path of `tessera evaluate` on 10⁶ points written with 7
 *    and with 17 significant digits, in this process stage by stage (read, parse, index, locate,
 *    law, format, write) and as a cold CLI process (wall points/s, peak MB), and one cold process
 *    under `node --cpu-prof` summarised as self time per function; each with `--threads 1` and 2 (the
 *    data lines split over two threads, each parsing, locating and formatting its range: the default
 *    on this 2-core machine), at 7 digits also with `--index` (the k-d tree read from the file an
 *    earlier run wrote) on 1 and 2 threads, and on the table a cold `tessera solve --index` wrote
 *    (same fixture and region count) with no index option, its <table>.index read: the first
 *    evaluate after a solve that wrote the index (SUMMARY: "index written at solve"); the locator against the
 *    sequential scan on a few thousand (target ≥ 10⁶ points/s wall). In-process stages print
 *    wall/CPU seconds; each cold CLI run is made with `--times` and its stage line is printed; a
 *    SUMMARY line gives the three measures side by side (warm locate per CPU second and wall, cold
 *    CLI end to end wall and per CPU second).
 * 3. A big table end to end, every stage a cold CLI process under /usr/bin/time (wall seconds,
 *    peak resident MB): a generated mpQP over a 3-D θ whose regions are the cells of an
 *    arrangement of planes (a bank of independent saturating channels, invented) is solved lean up
 *    to TESSERA_BENCH_BIG_REGIONS (default 100 000) or TESSERA_BENCH_BIG_SECONDS (default 1 800)
 *    and written; then `evaluate` reads it back and evaluates 10⁶ points, `map` draws a slice,
 *    `gaps` checks the coverage, `emit` writes C (double, box tree). Target: every stage, the
 *    solve included, within 2 GB. Set
 *    TESSERA_BENCH_BIG_REGIONS=20000 for a run of a few minutes.
 * TESSERA_BENCH_ONLY=evaluate (or sizes, big, comma-separated) runs only those sections.
 * CPU seconds are printed beside wall seconds: the machine is shared, and CPU time is the fairer
 * figure under load (still inflated by contention).
 */
import { closeSync, existsSync, mkdtempSync, openSync, readdirSync, readFileSync, rmSync, statSync, writeFileSync, writeSync } from 'node:fs';
import { spawnSync } from 'node:child_process';
import { tmpdir, loadavg } from 'node:os';
import { join } from 'node:path';
import { loadProblem } from '../../src/problem/index.js';
import { solveProblem } from '../../src/table/solve.js';
import { readTableFile } from '../../src/table/file.js';
import { evaluateTable, locateSequential } from '../../src/table/table.js';
import { regionBoundingBox, tableLocator } from '../../src/table/locator.js';
import { BoxIndex } from '../../src/table/boxindex.js';
import { lpCounter } from '../../src/lp/kernel.js';
import { tol } from '../../src/tol.js';
import { parseTableJson, tableToJson } from '../../src/table/table.js';
import { evaluateCsvBytes, parsePointsFlat } from '../../src/table/points.js';
import type { TableFile } from '../../src/table/format.js';

const dir = join(import.meta.dirname, '..', 'fixtures', 'scale');
const sizeRegions = Number(process.env.TESSERA_BENCH_SIZE_REGIONS ?? 3000);
const bigRegions = Number(process.env.TESSERA_BENCH_BIG_REGIONS ?? 100_000);
const bigSeconds = Number(process.env.TESSERA_BENCH_BIG_SECONDS ?? 1800);
const evalRegions = Number(process.env.TESSERA_BENCH_EVAL_REGIONS ?? 6000);

const peakMb = (): number => process.resourceUsage().maxRSS / 1024;
const cpu = (): number => {
  const u = process.cpuUsage();
  return (u.user + u.system) / 1e6;
};

function timed<T>(f: () => T): { value: T; s: number; cpu: number } {
  const c0 = cpu();
  const t0 = performance.now();
  const value = f();
  return { value, s: (performance.now() - t0) / 1000, cpu: cpu() - c0 };
}

function seededPoints(table: TableFile, count: number, seed: number): Float64Array[] {
  let s = seed >>> 0;
  const rnd = (): number => ((s = (Math.imul(s, 1103515245) + 12345) >>> 0) / 4294967296);
  const n = table.dims.ntheta;
  const out: Float64Array[] = [];
  for (let i = 0; i < count; i++) {
    const p = new Float64Array(n);
    for (let j = 0; j < n; j++) p[j] = table.box.lower[j] + rnd() * (table.box.upper[j] - table.box.lower[j]);
    out.push(p);
  }
  return out;
}

function sizes(): void {
  console.log(`\ntable bytes per region, one region per line (first ${sizeRegions} regions):`);
  for (const name of ['boom-4d-n8', 'boom-4d-n12', 'mixer-5d-n10']) {
    const loaded = loadProblem(join(dir, `${name}.json`));
    const full = solveProblem(loaded, { maxRegions: sizeRegions }).table;
    const lean = solveProblem(loaded, { maxRegions: sizeRegions, lean: true }).table;
    const per = (t: TableFile) => tableToJson(t).length / t.regions.length;
    const old = JSON.stringify(full, null, 1).length / full.regions.length;
    console.log(
      `  ${name.padEnd(14)} ${String(full.regions.length).padStart(6)} regions  full ${per(full).toFixed(0).padStart(5)} B  lean ${per(lean).toFixed(0).padStart(5)} B  (version 2 layout, full: ${old.toFixed(0)} B)  target ≤ 1500 B lean in 4-D`,
    );
  }
}

/** Seeded points as CSV text (header line of θ names), each entry with `digits` significant digits. */
function pointsCsv(table: TableFile, pts: Float64Array[], digits: number): string {
  const lines = [table.thetaNames.join(',')];
  for (const p of pts) lines.push(Array.from(p, (v) => String(Number(v.toPrecision(digits)))).join(','));
  return lines.join('\n') + '\n';
}

function evaluateBench(): void {
  const loaded = loadProblem(join(dir, 'boom-4d-n12.json'));
  const solved = timed(() => solveProblem(loaded, { maxRegions: evalRegions, lean: true }));
  // read back from text, as `tessera evaluate` does (the index is built per table object)
  const table = parseTableJson(tableToJson(solved.value.table), 'boom-4d-n12');
  console.log(`\nevaluate on boom-4d-n12, first ${table.regions.length} regions (lean; solved in ${solved.s.toFixed(1)} s); load average ${loadavg()[0].toFixed(1)}:`);
  const pts = seededPoints(table, 1_000_000, 0x5eed);
  const build = timed(() => tableLocator(table.regions, table.box.lower, table.box.upper));
  const loc = build.value;
  console.log(`  index: ${build.s.toFixed(2)} s (${build.cpu.toFixed(2)} s CPU, code cold) for ${JSON.stringify(loc.stats)}`);
  // the two parts of the build again, code warm: region boxes (LPs counted) and the k-d tree
  lpCounter.calls = 0;
  const boxes = timed(() => table.regions.map((r) => regionBoundingBox(r.A, r.b, r.chebyshev.center, 1e3 * tol.inside)));
  const lps = lpCounter.calls;
  const tree = timed(() => new BoxIndex(table.regions, boxes.value, table.box.lower, table.box.upper, { rule: 'exact-first', listingBudget: 12 }));
  console.log(`  index again (code warm): boxes ${boxes.cpu.toFixed(2)} s CPU (${lps} LPs for ${2 * table.dims.ntheta * table.regions.length} box sides), tree ${tree.cpu.toFixed(2)} s CPU`);
  // warm the cached locator of evaluateTable
  for (let i = 0; i < 50; i++) evaluateTable(table, pts[i]);
  // the locate step of `tessera evaluate`: θ packed one after another (as parsePointsFlat gives them),
  // the region only (no residual); three rounds, the first warms the compiled code
  const n = table.dims.ntheta;
  const packed = new Float64Array(pts.length * n);
  pts.forEach((p, k) => packed.set(p, k * n));
  const best = { warmCpu: 0, warmWall: 0, cliWall: 0, cliCpu: 0, cliLine: '', cli2Wall: 0, cli2Cpu: 0, idxWall: 0, idxCpu: 0, idx2Wall: 0, idx2Cpu: 0, idx2Threads: '', tableFullCpu: Infinity, tableLawsCpu: Infinity, solvedWall: 0, solved2Wall: 0, solved2Cpu: 0, solved17Wall: 0, solveIndex: '' };
  for (const round of [1, 2, 3]) {
    const a = timed(() => {
      let f = 0;
      for (let k = 0; k < pts.length; k++) if (loc.locateAt(packed, k * n, 1e-8, false) >= 0) f++;
      return f;
    });
    console.log(
      `  warm locate (locateAt on packed points, evaluate's path), round ${round}: ${(pts.length / a.s / 1e6).toFixed(2)} M points/s wall (${(pts.length / a.cpu / 1e6).toFixed(2)} per CPU s); ${a.value} in a region; load ${loadavg()[0].toFixed(1)}; target ≥ 1 M points/s`,
    );
    if (round > 1) {
      best.warmCpu = Math.max(best.warmCpu, pts.length / a.cpu);
      best.warmWall = Math.max(best.warmWall, pts.length / a.s);
    }
  }
  for (const round of [1, 2]) {
    const a = timed(() => {
      let f = 0;
      for (const p of pts) if (loc.locate(p) >= 0) f++;
      return f;
    });
    const b = timed(() => {
      let f = 0;
      for (const p of pts) if (evaluateTable(table, p).region >= 0) f++;
      return f;
    });
    console.log(
      `  round ${round}: locate ${(pts.length / a.s / 1e6).toFixed(2)} M points/s (${(pts.length / a.cpu / 1e6).toFixed(2)} per CPU s), evaluateTable (locate + law, an array per point) ${(pts.length / b.s / 1e6).toFixed(2)} M points/s (${(pts.length / b.cpu / 1e6).toFixed(2)} per CPU s); ${a.value} of ${pts.length} in a region`,
    );
  }
  // the whole CSV path of `tessera evaluate` in this process, stage by stage: read the points file,
  // parse, index (bounding-box LPs + k-d tree + packed laws), locate, law, format, write
  const tmp = mkdtempSync(join(tmpdir(), 'tessera-evalbench-'));
  try {
    const tableFile = join(tmp, 'boom.table.json');
    writeFileSync(tableFile, tableToJson(table));
    // the index written at solve: a cold `tessera solve --index` of the same fixture and region count
    // (its own table: the CLI's canonical form and threads; the same box), which writes <table>.index;
    // `evaluate` with no option then reads it. Its summary line says what the index added to the solve.
    const solvedFile = join(tmp, 'solved.table.json');
    const solveRun = cliStage(['solve', join(dir, 'boom-4d-n12.json'), '--max-regions', String(evalRegions), '--lean', '-o', solvedFile, '--index']);
    const indexLine = solveRun.out.split('\n').find((l) => l.startsWith('  index: written')) ?? '(no index line)';
    best.solveIndex = (/\(([\d.]+ MB, [\d.]+ s)\)/.exec(indexLine)?.[1] ?? '?').replace(' s', ' s at solve');
    console.log(`  cold CLI solve --index (${evalRegions} regions, lean): exit ${solveRun.status}, ${solveRun.s.toFixed(1)} s wall, peak ${solveRun.mb.toFixed(0)} MB; load ${loadavg()[0].toFixed(1)}; ${indexLine.trim()}`);
    for (const digits of [7, 17]) {
      const ptsFile = join(tmp, `points-${digits}.csv`);
      writeFileSync(ptsFile, pointsCsv(table, pts, digits));
      for (const round of [1, 2]) {
        const fresh = parseTableJson(tableToJson(table), 'again'); // a new table object: the index is built again
        const c0 = cpu();
        const t0 = performance.now();
        const read = timed(() => readFileSync(ptsFile));
        const parse = timed(() => parsePointsFlat(read.value, 'points.csv', fresh.thetaNames));
        const times = { index: 0, locate: 0, law: 0, format: 0, cpu: { index: 0, locate: 0, law: 0, format: 0 }, cpuNow: cpu };
        let bytes = 0;
        let write = 0;
        const fd = openSync(join(tmp, 'out.csv'), 'w');
        try {
          for (const chunk of evaluateCsvBytes(fresh, read.value, parse.value, [], { times })) {
            const w0 = performance.now();
            writeSync(fd, chunk);
            write += (performance.now() - w0) / 1000;
            bytes += chunk.length;
          }
        } finally {
          closeSync(fd);
        }
        const wall = (performance.now() - t0) / 1000;
        const n = parse.value.count;
        const f = (x: number): string => x.toFixed(2);
        const c = times.cpu;
        console.log(
          `  in process, ${digits} significant digits, round ${round} (wall/CPU s): read ${f(read.s)}/${f(read.cpu)}, parse ${f(parse.s)}/${f(parse.cpu)}, index ${f(times.index)}/${f(c.index)}, locate ${f(times.locate)}/${f(c.locate)}, law ${f(times.law)}/${f(c.law)}, format ${f(times.format)}/${f(c.format)}, write ${f(write)}; total ${f(wall)} s = ${(n / wall / 1e6).toFixed(2)} M points/s (${(n / (cpu() - c0) / 1e6).toFixed(2)} per CPU s), ${(bytes / 2 ** 20).toFixed(0)} MB of CSV; load ${loadavg()[0].toFixed(1)}`,
        );
      }
      // a cold `tessera evaluate` process (start-up, table read, everything), twice; at 7 digits each
      // round also runs --threads 2 right after (paired: the same load, the same files)
      // with --index, the index file is written by the first run (round 0, not counted) and read by the next
      const indexFile = join(tmp, 'boom.index');
      // `solved`: the table `solve --index` wrote, evaluated with no index option (its <table>.index read);
      // the runs without an index say --no-index (nothing beside the bench's table, but explicit)
      for (const round of [1, 2])
        for (const [threads, withIndex, solved] of (digits === 7 ? [[1, false, false], [2, false, false], [1, true, false], [2, true, false], [1, false, true], [2, false, true]] : [[1, false, false], [2, false, false], [2, false, true]]) as [number, boolean, boolean][]) {
          const args = ['evaluate', solved ? solvedFile : tableFile, '--points', ptsFile, '-q', '--times', '--threads', String(threads), ...(withIndex ? ['--index', indexFile] : solved ? [] : ['--no-index'])];
          if (withIndex && !existsSync(indexFile)) cliStage(args, join(tmp, 'out.csv'));
          const r = cliStage(args, join(tmp, 'out.csv'));
          console.log(
            `  cold CLI, ${digits} significant digits, --threads ${threads}${withIndex ? ', --index (read)' : solved ? ', table and <table>.index of solve --index (no option)' : ', --no-index'}, round ${round}: exit ${r.status}, ${r.s.toFixed(2)} s wall = ${(pts.length / r.s / 1e6).toFixed(2)} M points/s, peak ${r.mb.toFixed(0)} MB; load ${loadavg()[0].toFixed(1)}; target ≥ 1 M points/s`,
          );
          // the process's own stage line (--times): wall/CPU seconds per stage
          const line = r.out.trim().split('\n').find((l) => l.startsWith('tessera: times'));
          if (line) console.log(`    ${line.replace('tessera: times ', 'stages ')}`);
          // with threads: each thread's own CPU seconds (the critical path on free cores) and its points
          const perThread = r.out.trim().split('\n').find((l) => l.startsWith('tessera: thread CPU'));
          if (perThread) console.log(`    ${perThread.replace('tessera: ', '')}`);
          const m = line ? / total ([\d.]+)\/([\d.]+) for/.exec(line) : null;
          if (solved) {
            if (digits === 17) best.solved17Wall = Math.max(best.solved17Wall, pts.length / r.s);
            else if (threads === 1) best.solvedWall = Math.max(best.solvedWall, pts.length / r.s);
            else if (m && pts.length / r.s > best.solved2Wall) {
              best.solved2Wall = pts.length / r.s;
              best.solved2Cpu = pts.length / Number(m[2]);
            }
            continue;
          }
          // the table stage, one thread: read in full (no --index) or for its laws only (--index read back)
          const tm = line && threads === 1 ? (withIndex ? / table and index \(laws only\) [\d.]+\/([\d.]+),/ : /, table [\d.]+\/([\d.]+),/).exec(line) : null;
          if (tm && withIndex) best.tableLawsCpu = Math.min(best.tableLawsCpu, Number(tm[1]));
          else if (tm) best.tableFullCpu = Math.min(best.tableFullCpu, Number(tm[1]));
          if (withIndex && threads > 1) {
            if (m && pts.length / r.s > best.idx2Wall) {
              best.idx2Wall = pts.length / r.s;
              best.idx2Cpu = pts.length / Number(m[2]);
              best.idx2Threads = perThread ?? '';
            }
            continue;
          }
          if (withIndex) {
            if (m && pts.length / r.s > best.idxWall) {
              best.idxWall = pts.length / r.s;
              best.idxCpu = pts.length / Number(m[2]);
            }
            continue;
          }
          if (digits === 7 && threads === 1 && m && (best.cliWall === 0 || pts.length / r.s > best.cliWall)) {
            best.cliWall = pts.length / r.s;
            best.cliCpu = pts.length / Number(m[2]);
            best.cliLine = line!;
          }
          if (digits === 7 && threads === 2 && m && pts.length / r.s > best.cli2Wall) {
            best.cli2Wall = pts.length / r.s;
            best.cli2Cpu = pts.length / Number(m[2]);
          }
        }
    }
    // where a cold process spends its time: node --cpu-prof, self time by function
    const profDir = join(tmp, 'prof');
    const r = cliStage(['evaluate', tableFile, '--points', join(tmp, 'points-7.csv'), '-q', '--threads', '1'], join(tmp, 'out.csv'), ['--cpu-prof', `--cpu-prof-dir=${profDir}`]);
    const prof = readdirSync(profDir).find((x) => x.endsWith('.cpuprofile'));
    if (r.status === 0 && prof) {
      const top = profileSelfTimes(JSON.parse(readFileSync(join(profDir, prof), 'utf8')) as CpuProfile).slice(0, 10);
      console.log(`  cold CLI under --cpu-prof (7 digits; ${r.s.toFixed(2)} s wall), self time by function:`);
      for (const [name, ms] of top) console.log(`    ${ms.toFixed(0).padStart(6)} ms  ${name}`);
    }
  } finally {
    rmSync(tmp, { recursive: true, force: true });
  }
  const M = 3000;
  const mp = (x: number): string => (x / 1e6).toFixed(2);
  console.log(
    `  SUMMARY evaluate on ${table.regions.length} regions, 10⁶ points (target ≥ 1 M points/s; load ${loadavg()[0].toFixed(1)}, 2 cores): warm locate ${mp(best.warmCpu)} M per CPU s, ${mp(best.warmWall)} M/s wall; cold CLI end to end (7 digits, best of 2) ${mp(best.cliWall)} M/s wall, ${mp(best.cliCpu)} M per CPU s; with --threads 2 ${mp(best.cli2Wall)} M/s wall, ${mp(best.cli2Cpu)} M per CPU s (every thread's CPU); with --index read from its file ${mp(best.idxWall)} M/s wall, ${mp(best.idxCpu)} M per CPU s; --index and --threads 2 ${mp(best.idx2Wall)} M/s wall, ${mp(best.idx2Cpu)} M per CPU s (${best.idx2Threads.replace('tessera: ', '')}); index written at solve (solve --index: ${best.solveIndex}), then evaluate with no option: one thread ${mp(best.solvedWall)} M/s wall, --threads 2 ${mp(best.solved2Wall)} M/s wall, ${mp(best.solved2Cpu)} M per CPU s, 17 digits --threads 2 ${mp(best.solved17Wall)} M/s wall; table stage, one thread, least CPU: read in full ${best.tableFullCpu.toFixed(2)} s, laws only (--index read back) ${best.tableLawsCpu.toFixed(2)} s (with the index file)`,
  );
  let same = 0;
  const seq = timed(() => {
    for (let i = 0; i < M; i++) if (locateSequential(table.regions, pts[i]) === loc.locate(pts[i])) same++;
  });
  console.log(`  sequential scan: ${(M / seq.s / 1e3).toFixed(1)} k points/s; same region as the index on ${same}/${M}`);
}

/**
 * A bank of m independent saturating channels z_i = clamp(a_i·θ, l_i, u_i) over a 3-D θ (invented):
 * the regions are the cells of an arrangement of 2m planes, ≈ 0.46·m³ of them inside the box
 * (measured: m = 40 gives 29 169). Each region has few rows and one LP is enough per facet, so
 * the count is reached in bounded time.
 */
export function channelProblem(m: number, d: number): unknown {
  let s = 7;
  const rnd = (): number => ((s = (Math.imul(s, 1103515245) + 12345) >>> 0) / 4294967296);
  const eye = (i: number, v: number) => Array.from({ length: m }, (_, j) => (i === j ? v : 0));
  const H: number[][] = [];
  const F: number[][] = [];
  const G: number[][] = [];
  const w: number[] = [];
  const E: number[][] = [];
  for (let i = 0; i < m; i++) {
    H.push(eye(i, 1));
    const g = Array.from({ length: d }, () => rnd() * 2 - 1);
    const norm = Math.hypot(...g);
    F.push(g.map((x) => -x / norm));
    const c = (rnd() - 0.5) * 1.2;
    const half = 0.15 + 0.5 * rnd();
    G.push(eye(i, 1), eye(i, -1));
    w.push(c + half, -(c - half));
    E.push(Array(d).fill(0), Array(d).fill(0));
  }
  return { name: `channels-${m}-${d}d`, description: 'bank of independent saturating channels (invented; a scaling bench)', mpqp: { H, F, G, w, E, outputs: 1 }, parameters: { lower: Array(d).fill(-1), upper: Array(d).fill(1) } };
}

/** The parts of a V8 .cpuprofile (node --cpu-prof) that the summary reads. */
interface CpuProfile {
  nodes: { id: number; callFrame: { functionName: string; url: string; lineNumber: number } }[];
  samples: number[];
  timeDeltas: number[];
}

/** Self time per function (ms), largest first, from a V8 CPU profile. */
function profileSelfTimes(p: CpuProfile): [string, number][] {
  const byNode = new Map<number, number>();
  p.samples.forEach((id, i) => byNode.set(id, (byNode.get(id) ?? 0) + (p.timeDeltas[i] ?? 0) / 1000));
  const byName = new Map<string, number>();
  for (const node of p.nodes) {
    const ms = byNode.get(node.id) ?? 0;
    const f = node.callFrame;
    const where = f.url ? `${f.url.split('/').slice(-2).join('/')}:${f.lineNumber + 1}` : '';
    const name = `${f.functionName || '(anonymous)'} ${where}`.trim();
    byName.set(name, (byName.get(name) ?? 0) + ms);
  }
  return [...byName].sort((a, b) => b[1] - a[1]);
}

/** One cold CLI process under /usr/bin/time: wall seconds, peak resident MB, exit code, stdout to `stdoutFile` when given. */
export function cliStage(args: string[], stdoutFile?: string, nodeArgs: string[] = []): { s: number; mb: number; status: number | null; out: string } {
  const cliPath = join(import.meta.dirname, '..', '..', 'dist', 'src', 'cli', 'main.js');
  const fd = stdoutFile ? openSync(stdoutFile, 'w') : 'pipe';
  try {
    const r = spawnSync('/usr/bin/time', ['-f', 'TIME %e %M', process.execPath, ...nodeArgs, cliPath, ...args], { encoding: 'utf8', stdio: ['ignore', fd, 'pipe'], maxBuffer: 1 << 26 });
    const m = /TIME ([\d.]+) (\d+)/.exec(r.stderr ?? '');
    return { s: m ? Number(m[1]) : NaN, mb: m ? Number(m[2]) / 1024 : NaN, status: r.status, out: (r.stdout ?? '') + (r.stderr ?? '').replace(/TIME .*\n?/, '') };
  } finally {
    if (typeof fd === 'number') closeSync(fd);
  }
}

function bigTable(): void {
  if (!existsSync('/usr/bin/time')) {
    console.log('\nbig table: skipped (/usr/bin/time, which measures each stage\'s peak memory, is not installed)');
    return;
  }
  const m = Math.max(8, Math.ceil(Math.cbrt(bigRegions / 0.46)));
  const out = mkdtempSync(join(tmpdir(), 'tessera-bigtable-'));
  const problemFile = join(out, 'channels.json');
  writeFileSync(problemFile, JSON.stringify(channelProblem(m, 3)));
  const file = join(out, 'big.table.json');
  console.log(`\nbig table, every stage a cold CLI process (peak resident MB by /usr/bin/time): ${m} channels over a 3-D θ (${2 * m} rows), target ${bigRegions} regions or ${bigSeconds} s; load average ${loadavg()[0].toFixed(1)}`);
  try {
    const solve = cliStage(['solve', problemFile, '--lean', '--threads', '1', '--max-regions', String(bigRegions), '--time-limit', String(bigSeconds), '-o', file, '-q']);
    if (!existsSync(file)) {
      console.log(`  solve: no table (exit ${solve.status}): ${solve.out.trim().split('\n')[0]}`);
      return;
    }
    const table = readTableFile(file);
    const R = table.regions.length;
    console.log(`  solve --lean: ${R} regions (complete: ${table.stats.complete}, stopped: ${table.stats.stopReason}) in ${solve.s.toFixed(0)} s = ${(R / solve.s).toFixed(0)} regions/s; written ${(statSync(file).size / 2 ** 20).toFixed(0)} MB (${(statSync(file).size / R).toFixed(0)} B/region); peak ${solve.mb.toFixed(0)} MB`);
    const ptsFile = join(out, 'points.csv');
    writeFileSync(ptsFile, pointsCsv(table, seededPoints(table, 1_000_000, 0xb16), 7));
    const stages: [string, string[], string?][] = [
      ['evaluate 10⁶ points (read back, index, CSV out)', ['evaluate', file, '--points', ptsFile, '-q'], join(out, 'eval.csv')],
      ['map (SVG, slice through the middle)', ['map', file, '-o', join(out, 'map.svg'), '-q']],
      [`gaps (20 000 points, a probe across every facet; exit 1 = holes${table.stats.complete ? '' : ', expected: the table is incomplete'})`, ['gaps', file, '-q']],
      ['emit (C, double, box tree)', ['emit', file, '--lang', 'c', '--precision', 'double', '--search', 'boxtree', '-o', join(out, 'c'), '-q']],
    ];
    let worst = solve.mb;
    for (const [label, args, to] of stages) {
      const r = cliStage(args, to);
      worst = Math.max(worst, r.mb);
      const extra = to ? `, ${(statSync(to).size / 2 ** 20).toFixed(0)} MB out` : '';
      console.log(`  ${label}: exit ${r.status}, ${r.s.toFixed(1)} s${extra}; peak ${r.mb.toFixed(0)} MB${r.status ? ` — ${r.out.trim().split('\n')[0]}` : ''}`);
    }
    console.log(`  largest peak over the stages: ${worst.toFixed(0)} MB (target ≤ 2048 MB for write, read, evaluate, map, gaps, emit)`);
  } finally {
    rmSync(out, { recursive: true, force: true });
  }
}

export async function run(): Promise<void> {
  // TESSERA_BENCH_ONLY=sizes,evaluate,big runs only those sections (default: all three)
  const only = (process.env.TESSERA_BENCH_ONLY ?? 'sizes,evaluate,big').split(',');
  console.log(`load average ${loadavg().map((x) => x.toFixed(1)).join(' ')}`);
  if (only.includes('sizes')) sizes();
  if (only.includes('evaluate')) evaluateBench();
  if (only.includes('big')) bigTable();
}
