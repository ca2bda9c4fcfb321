/**
 * Point-location structures swept over θ dimension 2…6 on one problem family of our own (an
 * n-th order integrator chain with light damping, |u| ≤ 1; invented numbers), every structure in
 * float: bytes (gcc sizeof, the cost report), worst-case operations, latency of the compiled C
 * (gcc -O2, each point timed on its own with clock_gettime, median over passes per point, then
 * median and p99 over the points; latencyMain) and of the online QP (quadprog, Goldfarb–Idnani, in
 * Node on the same condensed QP and the same points, each solve timed with hrtime, in this
 * process), their ratio, and the float certificate. Then the 4-D crane example compiled for
 * Cortex-M4F: object size of the chosen structure against sequential search.
 *
 * The family (FAMILY): the same horizon N = 20 in every dimension, covering the settling time of
 * the plant under its unconstrained LQR loop — the sample time h of each dimension is that settling
 * time (2 % band, computed here by lqrSettlingSteps) divided by N, so the loop settles within N steps
 * in every dimension (a common sizing rule: horizon ≈ settling time, 10–30 samples per settling) —
 * and the parameter box, the operating envelope, is [−b, b]ⁿ with b chosen so that each table
 * solves in well under a minute here. The family used before (LEGACY_HORIZON: h = 0.2, θ in
 * [−2, 2]ⁿ, N shrinking from 20 to 5 with the dimension, so the online QP shrank too) is measured
 * beside it for the summary line only (chosen structure, C vs QP), so both ratios are on record.
 *
 * The chosen structure, when its descent has a head (EmitArrays.headLevels), is timed again with and
 * without it, alternated on the same points (HEAD_ALTERNATIONS), so the head's gain is on record from
 * one run. TESSERA_BENCH_ONLY=5,6 (a list of θ dimensions, and `crane`) runs only those parts.
 */
import { execFileSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { loadavg, tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { emitC, loadProblem, parseProblem, readTableFile, solveProblem, tableProblem, writeFileAtomic, writeTableFile } from '../../src/index.js';
import type { LoadedProblem, TableFile } from '../../src/index.js';
import { SEARCH_KINDS } from '../../src/emit/arrays.js';
import { measureCandidates, pickCandidate } from '../../src/emit/choose.js';
import { cTarget } from '../../src/emit/targets/c.js';
import { tableHash } from '../../src/emit/index.js';
import type { EmitArrays } from '../../src/emit/arrays.js';
import { sampleBox } from '../../src/emit/sample.js';
import { certifyFloat, compareWithDouble, defaultTolerance, facetPoints, windowPoints } from '../../src/check/certify.js';
import { evaluateArrays } from '../../src/emit/arrays.js';
import type { MpqpProblem } from '../../src/index.js';
import { benchMain, latencyMain, makeQp } from './emit.bench.js';

const STRICT = ['-std=c99', '-Wall', '-Wextra', '-Wpedantic', '-Werror', '-O2'];
/** the earlier family's horizon per θ dimension (sample time 0.2, box [−2, 2]ⁿ), kept for its summary line */
export const LEGACY_HORIZON: Record<number, number> = { 2: 20, 3: 12, 4: 8, 5: 6, 6: 5 };
/** @deprecated the earlier family's horizons (LEGACY_HORIZON) */
export const HORIZON = LEGACY_HORIZON;
const SOLVE_SECONDS = 90;

/** The bench family per θ dimension: horizon, sample time (s) and half-width of the parameter box. */
export interface FamilyMember {
  horizon: number;
  sampleTime: number;
  box: number;
}
/** Horizon of the family in every dimension. */
export const FAMILY_HORIZON = 20;
/**
 * Sample time: the largest step on a 0.01 s grid near LQR settling time / N at which the loop settles
 * within N steps (settling times ≈ 3.0, 5.6, 7.6, 9.6, 11.0 s for n = 2…6; lqrSettlingSteps, the
 * bench prints the steps); box half-widths chosen for solve times well under a minute per dimension
 * on this 2-core host.
 */
export const FAMILY: Record<number, FamilyMember> = {
  2: { horizon: FAMILY_HORIZON, sampleTime: 0.16, box: 4 },
  3: { horizon: FAMILY_HORIZON, sampleTime: 0.29, box: 2 },
  4: { horizon: FAMILY_HORIZON, sampleTime: 0.4, box: 1 },
  5: { horizon: FAMILY_HORIZON, sampleTime: 0.51, box: 0.7 },
  6: { horizon: FAMILY_HORIZON, sampleTime: 0.58, box: 0.5 },
};

/** The chain's matrices: n-th order integrator chain sampled at h (exact discretisation, light damping 0.98 on the diagonal). */
function chainMatrices(n: number, h: number): { A: number[][]; B: number[][]; Q: number[][]; R: number } {
  const fact = (k: number): number => (k <= 1 ? 1 : k * fact(k - 1));
  const A = Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => (j >= i ? h ** (j - i) / fact(j - i) : 0) * (i === j ? 0.98 : 1)));
  const B = Array.from({ length: n }, (_, i) => [h ** (n - i) / fact(n - i)]);
  const Q = Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => (i === j ? (i === 0 ? 1 : 0.1) : 0)));
  return { A, B, Q, R: 0.1 };
}

/** n-th order integrator chain: horizon N, sample time h (default 0.2), θ in [−b, b]ⁿ (default b = 2). */
export function chainProblem(n: number, horizon: number, h = 0.2, b = 2): unknown {
  const { A, B, Q, R } = chainMatrices(n, h);
  return {
    name: `chain-${n}d`,
    plant: { A, B, sampleTime: h },
    horizon,
    weights: { state: Q, input: [[R]], terminal: 'riccati' },
    // input limits only: state limits on a chain make thin corner regions with gains in the thousands,
    // which no float build evaluates within 1e-5 (the certificate then says which law and facet)
    constraints: { input: { lower: [-1], upper: [1] } },
    parameters: { lower: new Array(n).fill(-b), upper: new Array(n).fill(b) },
  };
}

/** The bench family's problem in n dimensions (FAMILY). */
export function familyProblem(n: number): unknown {
  const m = FAMILY[n];
  return chainProblem(n, m.horizon, m.sampleTime, m.box);
}

/**
 * Steps until the unconstrained LQR loop of the chain (Riccati iteration to convergence; the
 * discrete algebraic Riccati equation, common practice) brings x(0) = e₁ within 2 % of its start
 * in every state, for good.
 */
export function lqrSettlingSteps(n: number, h: number): number {
  const { A, B, Q, R } = chainMatrices(n, h);
  let P = Q.map((r) => r.slice());
  let K = new Array<number>(n).fill(0);
  for (let it = 0; it < 5000; it++) {
    // K = (R + BᵀPB)⁻¹ BᵀPA, P = Q + Aᵀ P (A − B K)
    const BtP = Array.from({ length: n }, (_, j) => B.reduce((s, bi, i) => s + bi[0] * P[i][j], 0));
    const s = R + BtP.reduce((acc, v, i) => acc + v * B[i][0], 0);
    K = Array.from({ length: n }, (_, j) => BtP.reduce((acc, v, i) => acc + v * A[i][j], 0) / s);
    const Acl = A.map((r, i) => r.map((v, j) => v - B[i][0] * K[j]));
    const PAcl = P.map((_, i) => Acl[0].map((__, j) => P[i].reduce((acc, v, k) => acc + v * Acl[k][j], 0)));
    P = Q.map((r, i) => r.map((q, j) => q + A.reduce((acc, ak, k) => acc + ak[i] * PAcl[k][j], 0)));
  }
  const Acl = A.map((r, i) => r.map((v, j) => v - B[i][0] * K[j]));
  let x = new Array<number>(n).fill(0);
  x[0] = 1;
  // x(0) lies outside the band; the answer is the first step after the last one outside it
  let last = 0;
  for (let k = 1; k <= 2000; k++) {
    x = Acl.map((r) => r.reduce((acc, v, j) => acc + v * x[j], 0));
    if (Math.max(...x.map(Math.abs)) > 0.02) last = k;
  }
  return last + 1;
}

/** Seconds spent per stage of this bench (printed at the end, so its own run time is accounted for). */
const spent = new Map<string, number>();
function timed<T>(stage: string, f: () => T): T {
  const t0 = performance.now();
  try {
    return f();
  } finally {
    spent.set(stage, (spent.get(stage) ?? 0) + (performance.now() - t0) / 1000);
  }
}

/**
 * Solved tables are cached between runs of this bench (os.tmpdir()/tessera-bench-tables), keyed by
 * the problem, the solve options and the text of every source file the solve can run: the files
 * reached from src/table/solve.ts and src/table/file.ts (the table's reader and writer) through their
 * relative imports and the worker files they start (`new URL('./….ts', import.meta.url)`). A change
 * of the solver re-solves; a change of the location code (emit, the search trees in src/partition)
 * does not — the key used to cover all of src/ but emit, check, cli and plot, so a change of the tree
 * builder re-solved every table (127 s of a 1 077 s run, loaded). TESSERA_BENCH_FRESH=1 ignores the
 * cache. The bench prints which tables came from it.
 */
const CACHE_DIR = join(tmpdir(), 'tessera-bench-tables');
let sourceKey: string | null = null;
/** The source files reached from `roots` through relative imports and worker URLs, sorted. */
export function solverSources(roots: string[]): string[] {
  const seen = new Set<string>();
  const visit = (file: string): void => {
    if (seen.has(file) || !existsSync(file)) return;
    seen.add(file);
    const text = readFileSync(file, 'utf8');
    for (const m of text.matchAll(/(?:\bfrom\s+|\bimport\s*\(\s*|new URL\(\s*)'(\.{1,2}\/[^']+)'/g)) visit(join(dirname(file), m[1].replace(/\.js$/, '.ts')));
  };
  roots.forEach(visit);
  return [...seen].sort();
}
function solverSourceKey(): string {
  if (sourceKey) return sourceKey;
  const h = createHash('sha256');
  const src = join(import.meta.dirname, '../../src');
  for (const p of solverSources([join(src, 'table/solve.ts'), join(src, 'table/file.ts')])) h.update(p.slice(src.length)).update(readFileSync(p));
  return (sourceKey = h.digest('hex'));
}
export function cachedSolve(loaded: LoadedProblem, problem: unknown, timeLimit: number): { table: TableFile; mpqp: MpqpProblem; seconds: number; cached: boolean } {
  const key = createHash('sha256').update(JSON.stringify(problem)).update(String(timeLimit)).update(solverSourceKey()).digest('hex').slice(0, 16);
  const file = join(CACHE_DIR, `${key}.json`);
  if (!process.env.TESSERA_BENCH_FRESH && existsSync(file) && existsSync(`${file}.seconds`)) {
    const table = timed('read cached tables', () => readTableFile(file));
    return { table, mpqp: tableProblem(table).mpqp, seconds: Number(readFileSync(`${file}.seconds`, 'utf8')), cached: true };
  }
  const t0 = performance.now();
  const { table, mpqp } = timed('solve', () => solveProblem(loaded, { timeLimit }));
  const seconds = (performance.now() - t0) / 1000;
  mkdirSync(CACHE_DIR, { recursive: true });
  // an incomplete (time-limited) table depends on the machine's speed: not cached
  if (table.stats.complete) {
    writeTableFile(file, table);
    writeFileAtomic(`${file}.seconds`, String(seconds));
  }
  return { table, mpqp, seconds, cached: false };
}

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)];
}

/** Non-chosen structures' float check: seeded points, and at most this many of the certificate's facet and window points. */
const OTHER_SAMPLE = 4000;
const OTHER_FACET = 6000;

/** Alternations of the chosen structure with and without its descent head (same points, same run). */
const HEAD_ALTERNATIONS = 3;

/** Points of the latency runs (C and QP alike): the first LAT_POINTS of the seeded sample. */
const LAT_POINTS = 2000;

/** median and p99 ns of the compiled C lookup, per point (latencyMain), and the timer pair it subtracted. */
function cLatency(dir: string, tag: string, r: { header: string; source: string }, points: number[][], withPass = true, passes = 15): { median: number; p99: number; timer: number; pass: number } {
  const sub = join(dir, tag);
  mkdirSync(sub, { recursive: true });
  writeFileSync(join(sub, 'law.h'), r.header);
  writeFileSync(join(sub, 'law.c'), r.source);
  writeFileSync(join(sub, 'lat.c'), latencyMain('law', 'float', points, passes));
  execFileSync('gcc', [...STRICT, '-c', '-o', join(sub, 'law.o'), join(sub, 'law.c')]);
  execFileSync('gcc', ['-std=c99', '-D_POSIX_C_SOURCE=199309L', '-O2', '-o', join(sub, 'lat'), join(sub, 'lat.c'), join(sub, 'law.o')]);
  const [median, p99, timer] = execFileSync(join(sub, 'lat'), { encoding: 'utf8' }).trim().split(' ').map(Number);
  // throughput as the emit bench measures it: mean ns per evaluation of back-to-back calls, median of
  // the passes (the summary prints it for the chosen structure only, so only that one is run)
  if (!withPass) return { median, p99, timer, pass: NaN };
  writeFileSync(join(sub, 'pass.c'), benchMain('law', 'float', points));
  execFileSync('gcc', ['-std=c99', '-D_POSIX_C_SOURCE=199309L', '-O2', '-o', join(sub, 'pass'), join(sub, 'pass.c'), join(sub, 'law.o')]);
  const pass = Number(execFileSync(join(sub, 'pass'), { encoding: 'utf8' }).trim().split(' ')[0]);
  return { median, p99, timer, pass };
}

/**
 * median and p99 µs of one online QP solve, per point (median of 3 passes per point, hrtime pair not
 * subtracted: ~0.1 µs against ≥ 50 µs), and the back-to-back mean µs per solve (one timed loop over
 * all points, as the C pass harness).
 */
function qpLatency(mpqp: MpqpProblem, points: number[][]): { median: number; p99: number; mean: number } {
  const qp = makeQp(mpqp);
  const per = points.map(() => [] as number[]);
  let sink = 0;
  for (let rep = 0; rep < 3; rep++)
    points.forEach((p, i) => {
      const t = process.hrtime.bigint();
      const u = qp(p);
      per[i].push(Number(process.hrtime.bigint() - t) / 1000);
      sink += Number.isNaN(u) ? 0 : u;
    });
  const t = process.hrtime.bigint();
  for (const p of points) {
    const u = qp(p);
    sink += Number.isNaN(u) ? 0 : u;
  }
  const mean = Number(process.hrtime.bigint() - t) / 1000 / points.length;
  if (sink === 0.5) console.log('');
  const each = per.map(median).sort((a, b) => a - b);
  return { median: each[Math.floor(each.length / 2)], p99: each[Math.floor(each.length * 0.99)], mean };
}

/** text + data bytes of an object compiled for Cortex-M4F (single-precision FPU, hard float ABI). */
function m4Bytes(dir: string, tag: string, r: ReturnType<typeof emitC>): number | null {
  const sub = join(dir, `m4-${tag}`);
  mkdirSync(sub, { recursive: true });
  writeFileSync(join(sub, 'law.h'), r.header);
  writeFileSync(join(sub, 'law.c'), r.source);
  try {
    execFileSync('arm-none-eabi-gcc', [...STRICT, '-mcpu=cortex-m4', '-mthumb', '-mfpu=fpv4-sp-d16', '-mfloat-abi=hard', '-ffp-contract=off', '-c', '-o', join(sub, 'law.o'), join(sub, 'law.c')]);
    const line = execFileSync('arm-none-eabi-size', [join(sub, 'law.o')], { encoding: 'utf8' }).trim().split('\n')[1].trim().split(/\s+/);
    return Number(line[0]) + Number(line[1]);
  } catch {
    return null;
  }
}

export async function run(): Promise<void> {
  const started = performance.now();
  spent.clear();
  const dir = mkdtempSync(join(tmpdir(), 'tessera-locate-bench-'));
  const load = () => loadavg()[0].toFixed(1);
  const out: string[] = [`point location swept over θ dimension (integrator chain family, float builds, gcc -O2 on this host; 2 cores shared with other jobs, load ${load()} at the start)`];
  out.push(`  family: N = ${FAMILY_HORIZON} in every dimension (covers the unconstrained LQR loop's 2 % settling), |u| <= 1, sample time h = settling time / N, θ box [-b, b]^n as the operating envelope`);
  out.push(
    `  timing: the same ${LAT_POINTS} seeded points for C and QP. Per-point median: each point timed on its own (C: clock_gettime pair, its own median cost subtracted, median of 15 passes per point; QP: hrtime, median of 3 passes), then the median over the points. ` +
      'Back-to-back mean: one timed loop over all points divided by their count (C: median of the passes). The ratio QP/C is the ratio of the per-point medians; the ratio of the back-to-back means is printed beside it.',
  );
  const summary: string[] = ['  summary (this family): dim, regions, structure picked by the cost model, C per-point median/p99 ns and back-to-back mean, online QP per-point median/p99 µs and back-to-back mean, ratio of medians (target ≥ 1000x) and of means, load'];
  const legacy: string[] = [`  summary (earlier family, h = 0.2, θ in [-2, 2]^n, N = ${Object.values(LEGACY_HORIZON).join(', ')} for n = 2…6: the online QP shrinks with n): same columns, chosen structure only`];
  const cache: string[] = [];
  out.push(
    `  dim regions | structure   bytes(total)  location/region-data  worst MACs  worst cmps  C median/p99 ns  QP/C  float check  build s. The chosen structure gets the full float certificate (certifyFloat: 20 000 seeded points, every facet point and the rounding window of every shared facet); the others the same comparison with the double law on ${OTHER_SAMPLE} seeded points and an evenly spaced ${OTHER_FACET}-point subset of those facet and window points (the full certificate of every structure was half of this bench's time)`,
  );
  // TESSERA_BENCH_ONLY=5,6 runs those θ dimensions only (both families); the crane part runs when it is
  // unset or lists `crane`
  const only = process.env.TESSERA_BENCH_ONLY?.split(',').map((x) => x.trim()) ?? null;
  const head: string[] = ['  descent head (same run, same points): the chosen structure with its head and without (headLevels 0), alternated, per-point medians of each'];
  for (const n of [2, 3, 4, 5, 6]) {
    if (only && !only.includes(String(n))) continue;
    const m = FAMILY[n];
    const problem = familyProblem(n);
    const solved = cachedSolve(parseProblem(problem, `chain-${n}d (bench)`), problem, SOLVE_SECONDS);
    const { mpqp, table } = solved;
    if (solved.cached) cache.push(`chain-${n}d`);
    const points = sampleBox(table.box, 20000, 2026);
    const latPts = points.slice(0, LAT_POINTS);
    const qp = timed('online QP (quadprog)', () => qpLatency(mpqp, latPts));
    const cands = timed('build and measure every structure', () => measureCandidates(table, cTarget, 'float', SEARCH_KINDS));
    const { chosen, reason } = pickCandidate(cands);
    const hash = tableHash(table);
    let facetSet: number[][] | undefined;
    out.push(
      `  ${n}-D: N = ${m.horizon}, h = ${m.sampleTime} s (LQR settles in ${lqrSettlingSteps(n, m.sampleTime)} steps), θ in [-${m.box}, ${m.box}]^${n}, nz = ${mpqp.nz}, ${mpqp.nc} constraint rows: ` +
        `${table.regions.length} regions (solved in ${solved.seconds.toFixed(0)} s${solved.cached ? ', table from the cache' : ''}${table.stats.complete ? '' : ', INCOMPLETE'}), online QP median ${qp.median.toFixed(1)} µs, p99 ${qp.p99.toFixed(1)} µs per solve; cost model picks ${chosen.search}`,
    );
    for (const c of cands) {
      if (!c.cost) {
        out.push(`      ${c.search.padEnd(10)} not built: ${c.rejected} (${c.buildSeconds.toFixed(1)} s)`);
        continue;
      }
      // the build the cost model measured, printed as emit prints it (no second build)
      const build = c.build as EmitArrays;
      const files = timed('print C', () => cTarget.files(build, { prefix: 'law', table, tableHash: hash, searchReason: c === chosen ? reason : [`${c.search} search (bench)`] }));
      const r = { header: files.find((f) => f.name === 'law.h')!.text, source: files.find((f) => f.name === 'law.c')!.text };
      // the chosen structure in full; the others with fewer latency passes for sequential search and a
      // 4 000-point certificate, to keep the bench within a few minutes
      const isChosen = c.search === chosen.search;
      const lat = timed('gcc and C latency runs', () => cLatency(dir, `${n}-${c.search}`, r, latPts, isChosen, c.search === 'sequential' && !isChosen ? 5 : 15));
      const cert = timed('float certificates', () => {
        if (isChosen) return certifyFloat(table, build, { samples: 20000 });
        facetSet ??= (() => {
          const all = [...facetPoints(table), ...windowPoints(table)];
          const step = Math.max(1, Math.ceil(all.length / OTHER_FACET));
          return all.filter((_, i) => i % step === 0);
        })();
        const pts = [...sampleBox(table.box, OTHER_SAMPLE, 1), ...facetSet].map((p) => p.map(Math.fround));
        const cmp = compareWithDouble(table, (t) => evaluateArrays(build, t), pts);
        const tolerance = defaultTolerance(table);
        return { safe: cmp.lost === 0 && cmp.maxAbsDiff <= tolerance, maxAbsDiff: cmp.maxAbsDiff, tolerance, lostInFloat: cmp.lost, points: pts.length };
      });
      const ratio = (qp.median * 1000) / lat.median;
      out.push(
        `      ${c.search.padEnd(10)} ${String(c.cost.bytes.float.total).padStart(9)} B  ${(c.location / c.regions).toFixed(3).padStart(6)}  ${String(c.cost.worstMultiplyAdds).padStart(8)}  ${String(c.cost.worstComparisons).padStart(8)}  ${lat.median.toFixed(0).padStart(6)}/${lat.p99.toFixed(0).padEnd(6)}  ${ratio.toFixed(0).padStart(6)}x  ${cert.safe ? 'SAFE' : 'NOT SAFE'} (max |du| ${cert.maxAbsDiff.toPrecision(2)} at tol ${cert.tolerance.toPrecision(2)}, ${cert.lostInFloat} lost${typeof cert.points === 'number' ? ` on ${cert.points} points` : `, full certificate on ${cert.points.total} points`})  ${c.buildSeconds.toFixed(1)} s${c.rejected ? `  [not eligible: ${c.rejected}]` : ''}${c.search === chosen.search ? '  <- chosen' : ''}`,
      );
      if (isChosen && build.headLevels > 0)
        timed('head on/off, alternated', () => {
          // the same build without its head (the loop from the root), then both alternated
          const flat = { ...build, headLevels: 0 };
          const f2 = cTarget.files(flat, { prefix: 'law', table, tableHash: hash, searchReason: [`${c.search} search without head (bench)`] });
          const r2 = { header: f2.find((f) => f.name === 'law.h')!.text, source: f2.find((f) => f.name === 'law.c')!.text };
          const on = [lat.median];
          const off: number[] = [];
          for (let k = 0; k < HEAD_ALTERNATIONS; k++) {
            off.push(cLatency(dir, `${n}-${c.search}-nohead`, r2, latPts, false).median);
            on.push(cLatency(dir, `${n}-${c.search}-head`, r, latPts, false).median);
          }
          const mOn = median(on);
          const mOff = median(off);
          head.push(
            `    ${n}-D ${c.search.padEnd(7)} head ${build.headLevels} levels: C median ${mOn.toFixed(0)} ns (${on.map((x) => x.toFixed(0)).join(' ')}), without ${mOff.toFixed(0)} ns (${off.map((x) => x.toFixed(0)).join(' ')}); QP/C ${((qp.median * 1000) / mOn).toFixed(0)}x with, ${((qp.median * 1000) / mOff).toFixed(0)}x without  (load ${load()})`,
          );
        });
      if (c.search === chosen.search)
        summary.push(
          `    ${n}-D ${String(table.regions.length).padStart(5)} regions  N = ${m.horizon}, nz = ${mpqp.nz}  ${c.search.padEnd(10)} C median ${lat.median.toFixed(0)}/${lat.p99.toFixed(0)} ns (timer pair ${lat.timer.toFixed(0)} ns subtracted), mean ${lat.pass.toFixed(0)} ns  QP median ${qp.median.toFixed(1)}/${qp.p99.toFixed(1)} µs, mean ${qp.mean.toFixed(1)} µs  ratio of medians ${ratio.toFixed(0)}x ${ratio >= 1000 ? '≥' : '<'} 1000x (of means ${((qp.mean * 1000) / lat.pass).toFixed(0)}x)  float ${cert.safe ? 'SAFE' : 'NOT SAFE'} ${cert.lostInFloat} lost  (load ${load()})`,
        );
    }
    // the earlier family in the same dimension: chosen structure only, same harnesses, same process
    timed('earlier family (solve or cache, QP, emit auto, C)', () => {
      const oldProblem = chainProblem(n, LEGACY_HORIZON[n]);
      const old = cachedSolve(parseProblem(oldProblem, `chain-${n}d (earlier bench family)`), oldProblem, SOLVE_SECONDS);
      if (old.cached) cache.push(`chain-${n}d (earlier)`);
      const oldPts = sampleBox(old.table.box, LAT_POINTS, 2026);
      const oqp = qpLatency(old.mpqp, oldPts);
      const r = emitC(old.table, { precision: 'float', search: 'auto', prefix: 'law' });
      const lat = cLatency(dir, `${n}-legacy`, r, oldPts);
      const ratio = (oqp.median * 1000) / lat.median;
      legacy.push(
        `    ${n}-D ${String(old.table.regions.length).padStart(5)} regions  N = ${LEGACY_HORIZON[n]}, nz = ${old.mpqp.nz}  ${r.search.padEnd(10)} C median ${lat.median.toFixed(0)}/${lat.p99.toFixed(0)} ns, mean ${lat.pass.toFixed(0)} ns  QP median ${oqp.median.toFixed(1)}/${oqp.p99.toFixed(1)} µs, mean ${oqp.mean.toFixed(1)} µs  ratio of medians ${ratio.toFixed(0)}x ${ratio >= 1000 ? '≥' : '<'} 1000x  (solved in ${old.seconds.toFixed(0)} s${old.cached ? ', from the cache' : ''}${old.table.stats.complete ? '' : ', INCOMPLETE'}; load ${load()})`,
      );
    });
  }
  out.push(...summary, ...(head.length > 1 ? head : []), ...legacy);
  // the 4-D example compiled for the usual single-precision target
  if (!only || only.includes('crane')) timed('crane-trolley-4d for Cortex-M4F', () => {
    const file = join(import.meta.dirname, '../../examples/crane-trolley-4d.json');
    const loaded = loadProblem(file);
    const solved = cachedSolve(loaded, readFileSync(file, 'utf8'), 300);
    if (solved.cached) cache.push('crane-trolley-4d');
    const { table } = solved;
    const auto = emitC(table, { precision: 'float', search: 'auto', prefix: 'law' });
    const seq = emitC(table, { precision: 'float', search: 'sequential', prefix: 'law' });
    const a = m4Bytes(dir, 'auto', auto);
    const s = m4Bytes(dir, 'seq', seq);
    out.push(
      a !== null && s !== null
        ? `  crane-trolley-4d (${table.regions.length} regions) for Cortex-M4F (arm-none-eabi-gcc -O2, text+data): ${auto.search} ${a} B, sequential ${s} B, ratio ${(a / s).toFixed(2)} (target ≤ 1.5); worst case ${auto.cost.worstMultiplyAdds} multiply-adds`
        : '  arm-none-eabi-gcc not available: Cortex-M4F object sizes not measured',
    );
  });
  rmSync(dir, { recursive: true, force: true });
  out.push(`  tables from the solved-table cache (${CACHE_DIR}; TESSERA_BENCH_FRESH=1 solves all): ${cache.length ? cache.join(', ') : 'none'}`);
  out.push(`  bench time ${((performance.now() - started) / 1000).toFixed(0)} s wall (load ${load()} at the end), by stage: ${[...spent].map(([k, v]) => `${k} ${v.toFixed(1)} s`).join(', ')}`);
  console.log(out.join('\n'));
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) await run();
