// Randomised campaign (not committed): random problems solved in process, checked against quadprog
// and javascript-lp-solver on random points. Usage: npx tsx tmp/fuzz.ts FIRST_SEED COUNT [kind]
import { parseProblem, solveProblem, evaluatePoints, InputError } from '../src/index.js';
import { qpReference, lpFeasibleReference } from '../test/helpers/reference.js';
import { writeFileSync, mkdirSync } from 'node:fs';

function rng(seed: number): () => number {
  let s = seed % 2147483647 || 1;
  return () => ((s = (s * 16807) % 2147483647), s / 2147483647);
}



mkdirSync('/tmp/s28/fuzz', { recursive: true });

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

const seed = Number(process.argv[2]);
const r = rng(seed * 7919 + 13);
for (let i = 0; i < 3; i++) r();
const { raw, kind } = r() < 0.3 ? mpqpProblem(r, seed) : mpcProblem(r, seed);
console.error(kind);
console.log(JSON.stringify(raw));
