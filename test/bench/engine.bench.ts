/**
 * Engine benchmark: per shipped example and for a scaling series (a positioning axis, invented
 * numbers, N = 2…12): regions, candidates, LPs, seconds, regions/s, and the per-region cost as a
 * multiple of one LP plus one KKT solve of the same size, both measured in this run.
 */
import { existsSync, mkdtempSync, readdirSync, rmSync } from 'node:fs';
import { spawnSync } from 'node:child_process';
import { join } from 'node:path';
import { loadavg, tmpdir } from 'node:os';
import { buildMpqp, formulate, loadProblem, parseProblem, solvePartition, type MpqpProblem } from '../../src/index.js';
import { chebyshevBall } from '../../src/lp/kernel.js';
import { luSolve } from '../../src/linalg/dense.js';
import { lpMaximizeReference } from '../../src/lp/reference.js';

const root = join(import.meta.dirname, '..', '..');

function rng(seed: number): () => number {
  let s = seed;
  return () => {
    s = (s * 16807) % 2147483647;
    return s / 2147483647;
  };
}

/** Median seconds of f over reps runs. */
function timeIt(f: () => void, reps: number): number {
  const t: number[] = [];
  for (let i = 0; i < reps; i++) {
    const t0 = performance.now();
    f();
    t.push((performance.now() - t0) / 1000);
  }
  return t.sort((a, b) => a - b)[Math.floor(reps / 2)];
}

/** One Chebyshev-ball LP in θ-space with as many rows as a region starts with, and one KKT solve of size nz + nθ. */
function unitCosts(p: MpqpProblem): { lp: number; kkt: number; lpReference: number } {
  const nt = p.ntheta;
  const m = p.nc + 2 * nt;
  const rnd = rng(11);
  const A = new Float64Array(m * nt);
  const b = new Float64Array(m);
  for (let i = 0; i < m; i++) {
    let n = 0;
    for (let j = 0; j < nt; j++) {
      A[i * nt + j] = rnd() - 0.5;
      n += A[i * nt + j] ** 2;
    }
    n = Math.sqrt(n);
    for (let j = 0; j < nt; j++) A[i * nt + j] /= n;
    b[i] = 0.5 + rnd();
  }
  const start = new Float64Array(nt);
  const batch = 200;
  const lp = timeIt(() => {
    for (let k = 0; k < batch; k++) chebyshevBall(A, b, m, nt, start, 10);
  }, 9) / batch;
  const lpReference = timeIt(() => {
    const n1 = nt + 1;
    const A1 = new Float64Array((m + 1) * n1);
    for (let i = 0; i < m; i++) {
      for (let j = 0; j < nt; j++) A1[i * n1 + j] = A[i * nt + j];
      A1[i * n1 + nt] = 1;
    }
    A1[m * n1 + nt] = 1;
    const b1 = Float64Array.from([...b, 10]);
    const c = new Float64Array(n1);
    c[nt] = 1;
    for (let k = 0; k < 20; k++) lpMaximizeReference(c, A1, b1, m + 1, n1);
  }, 5) / 20;
  const n = p.nz + nt;
  const M = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) M[i * n + j] = (i === j ? n : 0) + rnd() - 0.5;
  const rhs = new Float64Array(n).fill(1);
  const kkt = timeIt(() => {
    for (let k = 0; k < batch; k++) luSolve(M, n, rhs, 1e-12);
  }, 9) / batch;
  return { lp, kkt, lpReference };
}

function row(name: string, p: MpqpProblem): string {
  solvePartition(p); // warm-up: let the JIT compile the hot path before timing
  const t0 = performance.now();
  const part = solvePartition(p);
  const sec = (performance.now() - t0) / 1000;
  const s = part.stats;
  const u = unitCosts(p);
  const perRegion = sec / Math.max(1, s.regions);
  return [
    name.padEnd(26),
    `θ ${String(p.ntheta).padStart(1)}`,
    `nz ${String(p.nz).padStart(2)}`,
    `regions ${String(s.regions).padStart(5)}`,
    `cand ${String(s.candidates).padStart(5)} (${(s.candidates / Math.max(1, s.regions)).toFixed(2)}×)`,
    `LPs ${String(s.lps).padStart(6)}`,
    `${sec.toFixed(3).padStart(7)} s`,
    `${(s.regions / sec).toFixed(0).padStart(6)} regions/s`,
    `LP ${(u.lp * 1e6).toFixed(1)} µs (ref ${(u.lpReference * 1e6).toFixed(0)} µs)`,
    `KKT ${(u.kkt * 1e6).toFixed(2)} µs`,
    `region = ${(perRegion / (u.lp + u.kkt)).toFixed(1)}×(LP+KKT)`,
  ].join('  ');
}

export async function run(): Promise<void> {
  console.log(`engine: warm timings (second solve of each problem), medians for the unit costs; load average ${loadavg().map((x) => x.toFixed(1)).join(' ')}`);
  console.log('throughput (issue 8: ≥ 5 000 regions per CPU second in 2-D, ≥ 2 000 in 4-D/5-D): warm in this process beside the cold CLI');
  throughput('glider-2d-n40', 0, 5000);
  throughput('boom-4d-n8', 0, 2000);
  throughput('mixer-5d-n10', 3000, 2000);
  throughput('boom-4d-n12', 0, 2000);
  if (process.env.TESSERA_BENCH_ONLY === 'throughput') return;
  console.log('region-build proofs on/off, paired and alternated (median of 3):');
  proofsPaired('boom-4d-n8', 1500);
  proofsPaired('mixer-5d-n10', 1500);
  proofsPaired('glider-2d-n40', 1500);
  const ex = readdirSync(join(root, 'examples')).filter((f) => /\.(json|ya?ml)$/.test(f)).sort();
  for (const f of ex) {
    const loaded = loadProblem(join(root, 'examples', f));
    const { mpqp, layout } = formulate(loaded);
    console.log(row(f, mpqp) + `  [${[layout.formulation, ...layout.features].join('+')}]`);
  }
  console.log('formulation fixtures');
  for (const f of ['tracking-rate.json', 'disturbance-feedforward.json']) console.log(row(f, buildMpqp(loadProblem(join(root, 'test', 'fixtures', 'problems', f)))));
  console.log('paired in this run: the same plant with and without the feature');
  const pair = (label: string, file: string, strip: (raw: any) => void) => {
    const withIt = loadProblem(join(root, 'examples', file));
    const raw = JSON.parse(JSON.stringify(withIt.raw));
    strip(raw);
    console.log(row(`${label} with`, buildMpqp(withIt)));
    console.log(row(`${label} without`, buildMpqp(parseProblem(raw, `${file} (stripped)`))));
  };
  pair('soft limits', 'motor-soft-speed.json', (r) => delete r.constraints.state.soft);
  pair('terminal set', 'sway-damper-terminal-set.json', (r) => delete r.constraints.terminal);
  pair('tracking', 'hoist-setpoint.json', (r) => {
    delete r.tracking;
    r.parameters.lower.pop();
    r.parameters.upper.pop();
  });
  console.log('scaling series: positioning axis (double integrator, T = 0.05 s, |u| ≤ 2, |v| ≤ 1), N = 2…12');
  for (let N = 2; N <= 12; N += 2) {
    const raw = {
      name: `axis-N${N}`,
      plant: { A: [[1, 0.05], [0, 1]], B: [[0.00125], [0.05]] },
      horizon: N,
      weights: { state: [[4, 0], [0, 0.2]], input: [[0.05]] },
      constraints: { input: { lower: [-2], upper: [2] }, state: { lower: [null, -1], upper: [null, 1] } },
      parameters: { lower: [-2, -1.2], upper: [2, 1.2] },
    };
    console.log(row(`axis N=${N}`, buildMpqp(parseProblem(raw, `axis-N${N}.json`))));
  }
}

/**
 * Region-build proofs (the vertex pass of src/mpqp/vertices.ts and the certificates of
 * src/mpqp/prefilter.ts) on and off, paired and alternated in this process on the 4-D, 5-D and 2-D
 * scale fixtures: LPs per region (region build and facet cover apart), QPs and candidates per
 * region, and warm regions/s by the wall clock and per CPU second, the first `limit` regions of each.
 */
function proofsPaired(name: string, limit: number): void {
  const mpqp = buildMpqp(loadProblem(join(root, 'test', 'fixtures', 'scale', `${name}.json`)));
  solvePartition(mpqp, { maxRegions: 200 }); // warm-up
  const times: Record<string, number[]> = { on: [], off: [] };
  const cpu: Record<string, number[]> = { on: [], off: [] };
  const info: Record<string, string> = {};
  let regions = 0;
  let counts = '';
  for (let r = 0; r < 3; r++)
    for (const k of r % 2 ? ['off', 'on'] : ['on', 'off']) {
      const t0 = performance.now();
      const c0 = process.cpuUsage();
      const p = solvePartition(mpqp, { maxRegions: limit, strategy: { proofs: k === 'on' } });
      const cu = process.cpuUsage(c0);
      times[k].push((performance.now() - t0) / 1000);
      cpu[k].push((cu.user + cu.system) / 1e6);
      regions = p.stats.regions;
      const w = p.work!;
      info[k] = `LPs/region ${(p.stats.lps / regions).toFixed(2)} (region build ${(w.regionLps / regions).toFixed(2)}, cover ${(w.coverLps / regions).toFixed(2)})`;
      counts = `QPs/region ${(p.stats.qps / regions).toFixed(2)}, candidates/region ${(p.stats.candidates / regions).toFixed(2)}`;
    }
  const med = (x: number[]) => [...x].sort((a, b) => a - b)[Math.floor(x.length / 2)];
  const on = med(times.on);
  const off = med(times.off);
  // CPU seconds of this process beside the wall clock: on a shared machine the wall clock carries the other jobs' load
  const cOn = med(cpu.on);
  const cOff = med(cpu.off);
  console.log(
    `  ${name.padEnd(14)} ${regions} regions, ${counts}  proofs on: ${info.on}, ${(regions / on).toFixed(0)} regions/s (${(regions / cOn).toFixed(0)} per CPU s)  off: ${info.off}, ${(regions / off).toFixed(0)} regions/s (${(regions / cOff).toFixed(0)} per CPU s)  time off/on ${(off / on).toFixed(2)}, CPU ${(cOff / cOn).toFixed(2)}; load ${loadavg()[0].toFixed(1)}`,
  );
}

/**
 * Regions per CPU second on a scale fixture (the first `limit` regions when > 0): warm, the median
 * of 3 solves in this process after a warm-up (CPU seconds of this process by process.cpuUsage,
 * every thread of it: JIT and GC helpers count), beside the cold CLI (`solve --threads 1`, a fresh
 * process: set-up, JIT warm-up, canonical form and writing included; CPU seconds user + sys by
 * /usr/bin/time). On a shared machine the CPU second is the fair unit; the wall clock is printed too.
 */
function throughput(name: string, limit: number, target: number): void {
  const file = join(root, 'test', 'fixtures', 'scale', `${name}.json`);
  const mpqp = buildMpqp(loadProblem(file));
  const opts = limit > 0 ? { maxRegions: limit } : {};
  solvePartition(mpqp, opts); // warm-up
  const cpu: number[] = [];
  const wall: number[] = [];
  let regions = 0;
  for (let r = 0; r < 3; r++) {
    const t0 = performance.now();
    const c0 = process.cpuUsage();
    regions = solvePartition(mpqp, opts).stats.regions;
    const c = process.cpuUsage(c0);
    wall.push(regions / ((performance.now() - t0) / 1000));
    cpu.push(regions / ((c.user + c.system) / 1e6));
  }
  const med = (x: number[]) => [...x].sort((a, b) => a - b)[Math.floor(x.length / 2)];
  let cold = 'cold CLI not measured (/usr/bin/time missing)';
  if (existsSync('/usr/bin/time')) {
    const cli = join(root, 'dist', 'src', 'cli', 'main.js');
    const out = mkdtempSync(join(tmpdir(), 'tessera-engine-'));
    try {
      const args = [cli, 'solve', file, '--threads', '1', '-o', join(out, 't.json'), ...(limit > 0 ? ['--max-regions', String(limit)] : [])];
      const r = spawnSync('/usr/bin/time', ['-f', 'TIME %e %U %S', process.execPath, ...args], { encoding: 'utf8' });
      const t = /TIME ([\d.]+) ([\d.]+) ([\d.]+)/.exec(r.stderr ?? '');
      const m = /(\d+) regions, /.exec(r.stdout ?? '');
      if (t && m) {
        const n = Number(m[1]);
        cold = `cold CLI (--threads 1, whole command) ${(n / (Number(t[2]) + Number(t[3]))).toFixed(0)} per CPU s, ${(n / Number(t[1])).toFixed(0)} regions/s wall`;
      } else cold = `cold CLI not measured (exit ${r.status})`;
    } finally {
      rmSync(out, { recursive: true, force: true });
    }
  }
  console.log(
    `  ${name.padEnd(14)} ${regions} regions: warm ${med(cpu).toFixed(0)} per CPU s (${cpu.map((x) => x.toFixed(0)).join(' ')}), ${med(wall).toFixed(0)} regions/s wall; ${cold}; target ≥ ${target} per CPU s: ${med(cpu) >= target ? 'met' : 'NOT met'}; load ${loadavg()[0].toFixed(1)}`,
  );
}
