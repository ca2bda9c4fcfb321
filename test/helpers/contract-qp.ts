/**
 * An independent reading of the problem-format contract (docs/problem-format.md, "Formulations
 * beyond regulation"), for tests only: it never uses the project's formulation code. The cost and
 * every constraint are written literally from the text as functions of (z, θ), simulated step by
 * step; the QP at a given θ is then read off numerically (a quadratic is recovered exactly from
 * values at 0 and at unit vectors; an affine map from values at 0 and unit vectors) and solved by
 * quadprog (Goldfarb–Idnani dual method). Matrix functions come from mathjs (expm, pinv, inv).
 * The terminal invariant set is taken from the loaded model (the set itself is checked by its own tests).
 */
import { createRequire } from 'node:module';
import * as math from 'mathjs';

const require = createRequire(import.meta.url);
// eslint-disable-next-line @typescript-eslint/no-explicit-any
const quadprog: any = require('quadprog');

type M = number[][];
const mm = (A: M, B: M): M => math.multiply(A, B) as M;
const mv = (A: M, x: number[]): number[] => A.map((r) => r.reduce((s, a, j) => s + a * x[j], 0));
const tr = (A: M): M => math.transpose(A) as M;
const eye = (n: number): M => Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => (i === j ? 1 : 0)));
const quad = (x: number[], W: M) => x.reduce((s, xi, i) => s + xi * W[i].reduce((t, w, j) => t + w * x[j], 0), 0);
const perComp = (v: unknown, dim: number, dflt: number | null): (number | null)[] =>
  v === undefined ? new Array(dim).fill(dflt) : typeof v === 'number' ? new Array(dim).fill(v) : (v as (number | null)[]);

/** DARE by fixed-point iteration of the Riccati difference equation (common practice). */
export function dareByIteration(A: M, B: M, Q: M, R: M): M {
  let P = Q.map((r) => r.slice());
  for (let it = 0; it < 200000; it++) {
    const BtPA = mm(mm(tr(B), P), A);
    const Pn = math.subtract(math.add(Q, mm(mm(tr(A), P), A)), mm(tr(BtPA), mm(math.inv(math.add(R, mm(mm(tr(B), P), B)) as M) as M, BtPA))) as M;
    const d = Math.max(...Pn.flat().map((v, i) => Math.abs(v - P.flat()[i])));
    P = Pn.map((r, i) => r.map((v, j) => 0.5 * (v + Pn[j][i])));
    if (d <= 1e-13 * (1 + Math.max(...P.flat().map(Math.abs)))) break;
  }
  return P;
}

export interface ContractQp {
  nz: number;
  ntheta: number;
  /** law size: m, or k of an mpqp file */
  k: number;
  cost(z: number[], th: number[]): number;
  /** every constraint as a value that must be ≤ 0 */
  cons(z: number[], th: number[]): number[];
}

/** The contract's MPC problem (or a direct mpqp) as plain functions of (z, θ). */
export function contractQp(raw: any, terminalSet?: { H: M; h: number[] } | null): ContractQp {
  if (raw.mpqp) {
    const q = raw.mpqp;
    const nz = q.H.length;
    const nt = q.F[0].length;
    const c = q.c ?? new Array(nz).fill(0);
    const Y = q.Y ?? eye(nt).map((r) => r.map(() => 0));
    return {
      nz,
      ntheta: nt,
      k: q.outputs ?? nz,
      cost: (z, th) => 0.5 * quad(z, q.H) + z.reduce((s, zi, i) => s + zi * (mv(q.F, th)[i] + c[i]), 0) + 0.5 * quad(th, Y),
      cons: (z, th) => (q.G ?? []).map((g: number[], i: number) => g.reduce((s, a, j) => s + a * z[j], 0) - q.w[i] - q.E[i].reduce((s: number, a: number, j: number) => s + a * th[j], 0)),
    };
  }
  const pl = raw.plant;
  const n = pl.A.length;
  const m = pl.B[0].length;
  const C: M = pl.C ?? eye(n);
  const p = C.length;
  const nd = pl.Bd ? pl.Bd[0].length : pl.Cd ? pl.Cd[0].length : 0;
  let A: M = pl.A;
  let B: M = pl.B;
  let Bd: M = pl.Bd ?? Array.from({ length: n }, () => new Array(nd).fill(0));
  const Cd: M = pl.Cd ?? Array.from({ length: p }, () => new Array(nd).fill(0));
  if (pl.timeDomain === 'continuous') {
    const T = pl.sampleTime;
    const s = n + m + nd;
    const Mc = Array.from({ length: s }, (_, i) => Array.from({ length: s }, (_, j) => (i < n ? (j < n ? A[i][j] : j < n + m ? B[i][j - n] : Bd[i][j - n - m]) * T : 0)));
    const E = (math.expm(math.matrix(Mc)) as math.Matrix).toArray() as M;
    A = E.slice(0, n).map((r) => r.slice(0, n));
    B = E.slice(0, n).map((r) => r.slice(n, n + m));
    Bd = E.slice(0, n).map((r) => r.slice(n + m));
  }
  const w = raw.weights;
  const Q: M = w.state ?? mm(mm(tr(C), w.output), C);
  const R: M = w.input;
  const S: M | null = w.inputRate ?? null;
  const term = w.terminal ?? 'riccati';
  let P: M;
  if (term === 'riccati') P = dareByIteration(A, B, Q, R);
  else if (term === 'stage') P = Q;
  else if (term === 'none') P = Q.map((r) => r.map(() => 0));
  else if (Array.isArray(term)) P = term;
  else {
    const K: M = term.lyapunovGain;
    const Ak = math.subtract(A, mm(B, K)) as M;
    const W = math.add(Q, mm(mm(tr(K), R), K)) as M;
    P = W;
    for (let it = 0; it < 100000; it++) P = math.add(W, mm(mm(tr(Ak), P), Ak)) as M;
  }
  const N = raw.horizon;
  const Nu = raw.controlHorizon ?? N;
  const cs = raw.constraints ?? {};
  const hasRate = !!(w.inputRate || cs.inputRate);
  const tracked: number[] | null = raw.tracking ? (raw.tracking.outputs ?? Array.from({ length: p }, (_, i) => i)) : null;
  const pt = tracked?.length ?? 0;
  const ntheta = n + (hasRate ? m : 0) + pt + nd;
  // slacks: per soft kind, one per component with a finite bound; state slacks first
  const slackComps = (kind: 'state' | 'output', dim: number) =>
    cs[kind]?.soft ? Array.from({ length: dim }, (_, i) => i).filter((i) => (cs[kind].lower?.[i] ?? null) !== null || (cs[kind].upper?.[i] ?? null) !== null) : [];
  const sComps = slackComps('state', n);
  const oComps = slackComps('output', p);
  const nz = Nu * m + sComps.length + oComps.length;
  // target: minimum-norm solution by the pseudo-inverse
  let Tpinv: M | null = null;
  if (tracked) {
    const Mt: M = [...A.map((r, i) => [...r.map((a, j) => a - (i === j ? 1 : 0)), ...B[i]]), ...tracked.map((o) => [...C[o], ...new Array(m).fill(0)])];
    Tpinv = math.pinv(Mt) as M;
  }
  const split = (th: number[]) => {
    let o = 0;
    const x0 = th.slice(o, (o += n));
    const up = hasRate ? th.slice(o, (o += m)) : new Array(m).fill(0);
    const r = th.slice(o, (o += pt));
    const d = th.slice(o, (o += nd));
    return { x0, up, r, d };
  };
  const target = (r: number[], d: number[]) => {
    if (!Tpinv) return { xs: new Array(n).fill(0), us: new Array(m).fill(0) };
    const rhs = [...mv(Bd, d).map((v) => -v), ...tracked!.map((o, i) => r[i] - Cd[o].reduce((s, a, j) => s + a * d[j], 0))];
    const sol = mv(Tpinv, rhs);
    return { xs: sol.slice(0, n), us: sol.slice(n) };
  };
  const simulate = (z: number[], th: number[]) => {
    const { x0, up, d } = split(th);
    const xs = [x0];
    const us: number[][] = [];
    for (let k = 0; k < N; k++) {
      const kk = Math.min(k, Nu - 1);
      const u = z.slice(kk * m, kk * m + m);
      us.push(u);
      const x = xs[k];
      xs.push(mv(A, x).map((v, i) => v + mv(B, u)[i] + mv(Bd, d)[i]));
    }
    const ys = xs.map((x) => mv(C, x).map((v, i) => v + mv(Cd, d)[i]));
    return { xs, us, ys, up, d };
  };
  const slackOf = (z: number[], kind: 'state' | 'output', i: number): number | null => {
    const list = kind === 'state' ? sComps : oComps;
    const j = list.indexOf(i);
    if (j < 0) return null;
    return z[Nu * m + (kind === 'state' ? 0 : sComps.length) + j];
  };
  const soft = (kind: 'state' | 'output', dim: number) => {
    const s = cs[kind]?.soft;
    return s ? { q: perComp(s.quadratic, dim, null) as number[], l: perComp(s.linear, dim, 0) as number[], v: perComp(s.maxViolation, dim, null) } : null;
  };
  const softS = soft('state', n);
  const softO = soft('output', p);
  return {
    nz,
    ntheta,
    k: m,
    cost(z, th) {
      const { r, d } = split(th);
      const { xs: xt, us: ut } = target(r, d);
      const sim = simulate(z, th);
      let J = 0;
      for (let k = 0; k < N; k++) {
        J += quad(sim.xs[k].map((v, i) => v - xt[i]), Q) + quad(sim.us[k].map((v, i) => v - ut[i]), R);
        if (S) J += quad(sim.us[k].map((v, i) => v - (k === 0 ? sim.up[i] : sim.us[k - 1][i])), S);
      }
      J += quad(sim.xs[N].map((v, i) => v - xt[i]), P);
      for (const [kind, sp, dim] of [['state', softS, n], ['output', softO, p]] as const)
        if (sp) for (let i = 0; i < dim; i++) {
          const e = slackOf(z, kind, i);
          if (e !== null) J += sp.q[i] * e * e + sp.l[i] * e;
        }
      return J;
    },
    cons(z, th) {
      const sim = simulate(z, th);
      const out: number[] = [];
      const lim = (v: number, b: any, i: number, e: number) => {
        if (!b) return;
        if (b.upper && b.upper[i] !== null && b.upper[i] !== undefined) out.push(v - b.upper[i] - e);
        if (b.lower && b.lower[i] !== null && b.lower[i] !== undefined) out.push(b.lower[i] - v - e);
      };
      for (let k = 0; k < N; k++)
        for (let i = 0; i < m; i++) {
          lim(sim.us[k][i], cs.input, i, 0);
          lim(sim.us[k][i] - (k === 0 ? sim.up[i] : sim.us[k - 1][i]), cs.inputRate, i, 0);
        }
      for (let k = 1; k <= N; k++) {
        for (let i = 0; i < n; i++) lim(sim.xs[k][i], cs.state, i, slackOf(z, 'state', i) ?? 0);
        for (let i = 0; i < p; i++) lim(sim.ys[k][i], cs.output, i, slackOf(z, 'output', i) ?? 0);
      }
      for (const [kind, sp, dim] of [['state', softS, n], ['output', softO, p]] as const)
        if (sp) for (let i = 0; i < dim; i++) {
          const e = slackOf(z, kind, i);
          if (e === null) continue;
          out.push(-e);
          if (sp.v[i] !== null) out.push(e - (sp.v[i] as number));
        }
      if (terminalSet) terminalSet.H.forEach((row, i) => out.push(row.reduce((s, a, j) => s + a * sim.xs[N][j], 0) - terminalSet.h[i]));
      return out;
    },
  };
}

/** The QP at θ read off the functions: ½zᵀHz + gᵀz, A z ≤ b. */
export function qpAt(cq: ContractQp, th: number[], Hcache?: { H?: M }): { H: M; g: number[]; A: M; b: number[] } {
  const nz = cq.nz;
  const e = (i: number, s = 1) => Array.from({ length: nz }, (_, j) => (j === i ? s : 0));
  const zero = new Array(nz).fill(0);
  let H = Hcache?.H;
  if (!H) {
    // H does not depend on θ: read it at θ = 0, where no constant term adds rounding
    const t0 = new Array(cq.ntheta).fill(0);
    const J0 = cq.cost(zero, t0);
    const Ji = Array.from({ length: nz }, (_, i) => cq.cost(e(i), t0));
    H = Array.from({ length: nz }, (_, i) =>
      Array.from({ length: nz }, (_, j) => {
        if (i === j) return cq.cost(e(i), t0) + cq.cost(e(i, -1), t0) - 2 * J0;
        const zij = zero.slice();
        zij[i] = 1;
        zij[j] = 1;
        return cq.cost(zij, t0) - Ji[i] - Ji[j] + J0;
      }),
    );
    H = H.map((r, i) => r.map((v, j) => 0.5 * (v + H![j][i])));
    if (Hcache) Hcache.H = H;
  }
  const g = Array.from({ length: nz }, (_, i) => 0.5 * (cq.cost(e(i), th) - cq.cost(e(i, -1), th)));
  const c0 = cq.cons(zero, th);
  const cols = Array.from({ length: nz }, (_, i) => cq.cons(e(i), th).map((v, r) => v - c0[r]));
  const A = c0.map((_, r) => cols.map((col) => col[r]));
  return { H, g, A, b: c0.map((v) => -v) };
}

/** quadprog on the QP at θ; z = null when infeasible. */
export function solveContractQp(cq: ContractQp, th: number[], Hcache?: { H?: M }): number[] | null {
  const { H, g, A, b } = qpAt(cq, th, Hcache);
  const nz = cq.nz;
  const D = [[], ...H.map((r) => [0, ...r])];
  const d = [0, ...g.map((v) => -v)];
  const nc = A.length;
  const Amat: number[][] = [[]];
  for (let j = 0; j < nz; j++) Amat.push([0, ...A.map((row) => -row[j]), ...(nc === 0 ? [0] : [])]);
  const b0 = [0, ...b.map((v) => -v), ...(nc === 0 ? [-1] : [])];
  const res = quadprog.solveQP(D, d, Amat, b0, 0);
  if (res.message && res.message.length > 0) return null;
  return res.solution.slice(1);
}
