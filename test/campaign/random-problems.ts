/**
 * Randomised campaign (not part of `npm test`): random problems of our own, generated from a seed,
 * solved in process with a 30 s limit and evaluated at 1 500 seeded points against quadprog
 * (Goldfarb–Idnani dual method): points the table leaves uncovered where quadprog finds the MPC
 * feasible, laws that differ from quadprog's by more than 1e-5 (relative), points the table claims
 * where quadprog finds none. Problems that crash or go wrong are written to the output directory.
 *
 *   npm run campaign -- FIRST_SEED COUNT [mpqp]      (e.g. 1 200; "mpqp": direct mpQPs only)
 *   npm run campaign -- --print SEED                (the problem file of one seed, on stdout)
 *
 * Findings so far are in DEVELOPERS.md ("Randomised campaign"). javascript-lp-solver is not used
 * here: it cycles on some of these feasibility LPs (seed 187).
 */
import { parseProblem, solveProblem, evaluatePoints, InputError } from '../../src/index.js';
import { qpReference } from '../helpers/reference.js';
import { writeFileSync, mkdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

function rng(seed: number): () => number {
  let s = seed % 2147483647 || 1;
  return () => ((s = (s * 16807) % 2147483647), s / 2147483647);
}
const printOnly = process.argv[2] === '--print';
const first = Number(process.argv[printOnly ? 3 : 2] ?? 1);
const count = printOnly ? 1 : Number(process.argv[3] ?? 20);
const only = process.argv[4];
const outDir = join(tmpdir(), 'tessera-campaign');
if (!printOnly) mkdirSync(outDir, { recursive: true });

function mat(r: () => number, n: number, m: number, s = 1): number[][] {
  return Array.from({ length: n }, () => Array.from({ length: m }, () => +(s * (2 * r() - 1)).toFixed(3)));
}
function spd(r: () => number, n: number, semidef: boolean): number[][] {
  const k = semidef ? Math.max(1, n - 1) : n;
  const L = mat(r, n, k);
  const M = Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => L[i].reduce((s, _x, q) => s + L[i][q] * L[j][q], 0) + (i === j ? (semidef ? 1e-6 : 0.1) : 0)));
  return M.map((row) => row.map((x) => +x.toFixed(4)));
}
function diag(v: number[]): number[][] {
  return v.map((x, i) => v.map((_, j) => (i === j ? x : 0)));
}

function mpcProblem(r: () => number, seed: number): { raw: any; kind: string } {
  const n = 1 + Math.floor(r() * 3); // 1..3
  const m = 1 + (r() < 0.3 ? 1 : 0);
  const feats: string[] = [];
  let A = mat(r, n, n, 0.8);
  for (let i = 0; i < n; i++) A[i][i] = +(0.6 + 0.6 * r()).toFixed(3);
  const B = mat(r, n, m, 1);
  const raw: any = { name: `fuzz-${seed}`, plant: { A, B }, horizon: 2 + Math.floor(r() * 6), weights: {}, constraints: {} };
  if (r() < 0.25) {
    raw.controlHorizon = 1 + Math.floor(r() * raw.horizon);
    feats.push('Nu');
  }
  const p = r() < 0.4 ? 1 + Math.floor(r() * n) : 0;
  if (p) raw.plant.C = mat(r, p, n, 1);
  if (p && r() < 0.5) {
    raw.weights.output = spd(r, p, r() < 0.3);
    feats.push('Qy');
  } else raw.weights.state = r() < 0.5 ? diag(Array.from({ length: n }, () => +(r() < 0.2 ? 0 : 0.1 + 2 * r()).toFixed(3))) : spd(r, n, r() < 0.3);
  raw.weights.input = diag(Array.from({ length: m }, () => +(0.01 + r()).toFixed(3)));
  const t = r();
  raw.weights.terminal = t < 0.5 ? 'riccati' : t < 0.7 ? 'stage' : t < 0.85 ? 'none' : 'riccati';
  const umax = Array.from({ length: m }, () => +(0.2 + 2 * r()).toFixed(2));
  if (r() < 0.9) raw.constraints.input = { lower: umax.map((u) => (r() < 0.2 ? -u * 0.3 : -u)), upper: umax };
  let rate = false;
  if (r() < 0.3) {
    rate = true;
    raw.constraints.inputRate = { lower: umax.map((u) => -0.3 * u), upper: umax.map((u) => 0.3 * u) };
    feats.push('rate');
  } else if (r() < 0.15) {
    rate = true;
    raw.weights.inputRate = diag(Array.from({ length: m }, () => +(0.1 * r()).toFixed(3)));
    feats.push('S');
  }
  const xmax = Array.from({ length: n }, () => +(1 + 3 * r()).toFixed(2));
  if (r() < 0.5) {
    raw.constraints.state = { lower: xmax.map((x) => (r() < 0.3 ? null : -x)), upper: xmax.map((x) => (r() < 0.2 ? null : x)) };
    feats.push('xlim');
    if (r() < 0.3) {
      raw.constraints.state.soft = { quadratic: +(1 + 100 * r()).toFixed(1), linear: r() < 0.5 ? 0 : +(10 * r()).toFixed(1) };
      if (r() < 0.5) raw.constraints.state.soft.maxViolation = +(0.1 + r()).toFixed(2);
      feats.push('soft');
    }
  }
  if (p && r() < 0.4) {
    raw.constraints.output = { lower: Array.from({ length: p }, () => -(1 + 2 * r())), upper: Array.from({ length: p }, () => 1 + 2 * r()) };
    feats.push('ylim');
  }
  let nd = 0;
  if (r() < 0.15) {
    nd = 1;
    raw.plant.Bd = mat(r, n, 1, 0.5);
    feats.push('dist');
  }
  let nr = 0;
  if (p && r() < 0.3 && !raw.constraints.state?.soft) {
    raw.tracking = { outputs: [0] };
    nr = 1;
    feats.push('track');
  }
  if (!nr && !nd && !raw.constraints.state?.soft && r() < 0.1) {
    raw.constraints.terminal = 'invariant';
    raw.constraints.state ??= { lower: xmax.map((x) => -x), upper: xmax };
    feats.push('Xf');
  }
  const lower: number[] = [];
  const upper: number[] = [];
  const box = (w: number) => {
    lower.push(+(-w * (0.5 + r())).toFixed(2));
    upper.push(+(w * (0.5 + r())).toFixed(2));
  };
  for (let i = 0; i < n; i++) box(xmax[i] * (r() < 0.2 ? 2 : 1));
  if (rate) for (let i = 0; i < m; i++) box(umax[i]);
  for (let i = 0; i < nr; i++) box(1);
  for (let i = 0; i < nd; i++) box(0.5);
  raw.parameters = { lower, upper };
  return { raw, kind: `mpc n${n} m${m} N${raw.horizon} ${feats.join(',')}` };
}

function mpqpProblem(r: () => number, seed: number): { raw: any; kind: string } {
  const nt = 1 + Math.floor(r() * 3);
  const nz = 1 + Math.floor(r() * 4);
  const nc = 1 + Math.floor(r() * 10);
  const H = spd(r, nz, false);
  const G = mat(r, nc, nz);
  const feats: string[] = [];
  if (nc > 2 && r() < 0.3) {
    G[1] = G[0].map((x) => 2 * x); // parallel rows
    feats.push('parallel');
  }
  const E = mat(r, nc, nt);
  const w = Array.from({ length: nc }, () => +(0.2 + r()).toFixed(3));
  if (nc > 2 && r() < 0.2) {
    G[2] = G[0].slice();
    E[2] = E[0].slice();
    w[2] = w[0];
    feats.push('duplicate');
  }
  const raw: any = { name: `fuzzqp-${seed}`, mpqp: { H, F: mat(r, nz, nt), G, w, E, outputs: 1 + Math.floor(r() * nz) }, parameters: { lower: Array(nt).fill(-1), upper: Array(nt).fill(1) } };
  if (r() < 0.3) raw.mpqp.c = Array.from({ length: nz }, () => +(2 * r() - 1).toFixed(3));
  return { raw, kind: `mpqp nt${nt} nz${nz} nc${nc} ${feats.join(',')}` };
}

let problems = 0, holes = 0, wrong = 0, claims = 0, errors = 0, loose = 0;
for (let seed = first; seed < first + count; seed++) {
  const r = rng(seed * 7919 + 13);
  for (let i = 0; i < 3; i++) r();
  const { raw, kind } = (only ? only === 'mpqp' : r() < 0.3) ? mpqpProblem(r, seed) : mpcProblem(r, seed);
  if (printOnly) {
    console.log(JSON.stringify(raw));
    break;
  }
  let solved;
  const t = performance.now();
  try {
    solved = solveProblem(parseProblem(JSON.parse(JSON.stringify(raw)), `fuzz-${seed}.json`), { timeLimit: 30 });
  } catch (e) {
    const msg = (e as Error).message;
    if (e instanceof InputError) {
      console.log(`${seed} ${kind}: input error: ${msg.slice(0, 140)}`);
      continue;
    }
    errors++;
    console.log(`${seed} ${kind}: CRASH ${msg}`);
    writeFileSync(join(outDir, `crash-${seed}.json`), JSON.stringify(raw));
    continue;
  }
  problems++;
  const { table, mpqp } = solved;
  const complete = table.complete !== false && (solved.partition as any).stats?.complete !== false;
  const rr = rng(seed + 1);
  const pts: number[][] = [];
  for (let k = 0; k < 1500; k++) pts.push(Array.from(mpqp.box.lower, (l, j) => l + rr() * (mpqp.box.upper[j] - l)));
  const got = evaluatePoints(table, pts);
  let h = 0, wl = 0, cl = 0, worst = 0;
  const m = table.regions[0]?.law.g.length ?? 0;
  got.forEach((e, k) => {
    const ref = qpReference(mpqp, pts[k]);
    const feas = ref.feasible; // javascript-lp-solver cycles on some of these LPs (seed 187): quadprog decides
    if (e.region < 0) {
      if (feas && ref.feasible) h++;
      return;
    }
    if (!feas && !ref.feasible) {
      cl++;
      return;
    }
    if (!ref.feasible) return;
    for (let i = 0; i < m; i++) {
      const d = Math.abs(e.u![i] - ref.z[i]) / (1 + Math.abs(ref.z[i]));
      worst = Math.max(worst, d);
      if (d > 1e-5) wl++;
    }
  });
  const secs = ((performance.now() - t) / 1000).toFixed(1);
  const bad = h + wl + cl > 0;
  if (bad) writeFileSync(join(outDir, `bad-${seed}.json`), JSON.stringify(raw));
  holes += h; wrong += wl; claims += cl;
  if (worst > 1e-8) loose++;
  console.log(`${seed} ${kind}: ${table.regions.length} regions ${complete ? '' : 'INCOMPLETE '}${secs} s  holes ${h} wrong ${wl} claims ${cl} worst ${worst.toExponential(1)}${bad ? '  <-- BAD' : ''}`);
}
if (!printOnly) console.log(`problems ${problems}, crashes ${errors}, hole points ${holes}, wrong laws ${wrong}, infeasible claimed ${claims}, problems whose worst law differs by more than 1e-8: ${loose}`);
