/**
 * The MPC layers, each adding its part to the generic mpQP (QpBuilder). Composed in
 * `formulateMpc` (mpc.ts) in a fixed order, so the constraint rows always come as:
 *   input      u_i(k),  k = 0…N−1   label `u1(0) <= 1`, `u1(0) >= -1`
 *   inputRate  Δu_i(k), k = 0…N−1   label `du1(3) <= 0.5` (`d` + input name)
 *   state      x_i(k),  k = 1…N     label `x2(4) <= 2` (soft: `x2(4) <= 2 + x2_slack`)
 *   output     y_i(k),  k = 1…N     label `y1(2) >= -5`
 *   slacks     ε ≥ 0, then ε ≤ maxViolation (state slacks first)
 *   terminal   rows of the terminal invariant set on x(N), label `terminal3(8) <= 0.41`
 * within each kind ordered by k, then component i, upper row before lower row.
 */
import type { Bounds, MpcModel } from '../problem/types.js';
import type { QpBuilder, VMap } from './builder.js';
import type { MpcIndex } from './mpc-layout.js';
import { targetMap } from './target.js';

/** Predicted x(k) (k = 0…N), u(k), Δu(k) (k = 0…N−1) and y(k) = C x(k) + Cd d (k = 0…N) as maps of v. */
export interface Prediction {
  x: VMap[];
  u: VMap[];
  du: VMap[];
  y: VMap[];
}

/** Disturbance layer: Bd d enters every state step, Cd d every output (d held over the horizon). */
export function disturbanceTerms(model: MpcModel, b: QpBuilder, idx: MpcIndex): { state: VMap; output: VMap } | null {
  if (model.nd === 0 || !model.Bd || !model.Cd) return null;
  const d = b.pickTheta(idx.theta.disturbance, model.nd);
  return { state: b.apply(model.Bd, d), output: b.apply(model.Cd, d) };
}

/** Prediction layer: x(k+1) = A x(k) + B u(k) (+ Bd d), u(k) = u(Nu−1) for k ≥ Nu, u(−1) = u_prev. */
export function predict(model: MpcModel, b: QpBuilder, idx: MpcIndex): Prediction {
  const { n, m, N, Nu, A, B, C } = model;
  const dist = disturbanceTerms(model, b, idx);
  const uPrev = model.hasRate ? b.pickTheta(idx.theta.inputPrev, m) : b.zeros(m);
  let x = b.pickTheta(idx.theta.state, n);
  const out: Prediction = { x: [x], u: [], du: [], y: [] };
  for (let k = 0; k < N; k++) {
    const u = b.pick(Math.min(k, Nu - 1) * m, m);
    out.du.push(b.sum(u, k === 0 ? uPrev : out.u[k - 1], -1));
    out.u.push(u);
    x = b.sum(b.apply(A, x), b.apply(B, u));
    if (dist) x = b.sum(x, dist.state);
    out.x.push(x);
  }
  out.y = out.x.map((xk) => (dist ? b.sum(b.apply(C, xk), dist.output) : b.apply(C, xk)));
  return out;
}

/** Tracking layer: the steady-state target x_s, u_s as maps of θ's (r, d) blocks; zero without tracking. */
export function targetTerms(model: MpcModel, b: QpBuilder, idx: MpcIndex): { xs: VMap; us: VMap } {
  if (!model.tracking) return { xs: b.zeros(model.n), us: b.zeros(model.m) };
  const pt = model.tracking.outputs.length;
  const { Tx, Tu } = targetMap(model);
  // [r; d] sits contiguously in θ: reference block, then disturbance block
  const rd = b.pickTheta(idx.theta.reference, pt + model.nd);
  return { xs: b.apply(Tx, rd), us: b.apply(Tu, rd) };
}

/** Regulation cost around the target: Σ ‖x(k)−x_s‖²_Q + ‖u(k)−u_s‖²_R + ‖Δu(k)‖²_S + ‖x(N)−x_s‖²_P. */
export function addCost(model: MpcModel, b: QpBuilder, pred: Prediction, target: { xs: VMap; us: VMap }): void {
  for (let k = 0; k < model.N; k++) {
    b.addQuad(b.sum(pred.x[k], target.xs, -1), model.Q);
    b.addQuad(b.sum(pred.u[k], target.us, -1), model.R);
    if (model.S) b.addQuad(pred.du[k], model.S);
  }
  b.addQuad(b.sum(pred.x[model.N], target.xs, -1), model.P);
}

/**
 * Limit rows on the absolute predicted quantities (never shifted by the target). For a soft kind,
 * component i's rows are relaxed by its slack ε_i: q ≤ upper + ε_i and q ≥ lower − ε_i.
 */
export function addLimits(model: MpcModel, b: QpBuilder, pred: Prediction, idx: MpcIndex): void {
  const emit = (M: VMap, bounds: Bounds | undefined, names: string[], k: number, slack: number[] | null, slackNames: string[]) => {
    if (!bounds) return;
    M.forEach((row, i) => {
      for (const [bound, sign, op] of [
        [bounds.upper[i], 1, '<='],
        [bounds.lower[i], -1, '>='],
      ] as const) {
        if (bound === null) continue;
        const s = slack ? slack[i] : -1;
        let r = row;
        if (s >= 0) {
          r = row.slice();
          r[s] -= sign; // upper: q − ε ≤ ub;  lower: q + ε ≥ lb
        }
        b.addRow(r, sign, bound, `${names[i]}(${k}) ${op} ${bound}${s >= 0 ? ` ${sign > 0 ? '+' : '-'} ${slackNames[i]}` : ''}`);
      }
    });
  };
  const cs = model.constraints;
  const none: string[] = [];
  const rateNames = model.inputNames.map((s) => `d${s}`);
  const ss = model.soft.state ? idx.stateSlack : null;
  const os = model.soft.output ? idx.outputSlack : null;
  const sNames = model.stateNames.map((s) => `${s}_slack`);
  const oNames = model.outputNames.map((s) => `${s}_slack`);
  for (let k = 0; k < model.N; k++) emit(pred.u[k], cs.input, model.inputNames, k, null, none);
  for (let k = 0; k < model.N; k++) emit(pred.du[k], cs.inputRate, rateNames, k, null, none);
  for (let k = 1; k <= model.N; k++) emit(pred.x[k], cs.state, model.stateNames, k, ss, sNames);
  for (let k = 1; k <= model.N; k++) emit(pred.y[k], cs.output, model.outputNames, k, os, oNames);
}

/** Soft-limit layer: cost Σ q_i ε_i² + l_i ε_i, rows ε_i ≥ 0 and, with maxViolation, ε_i ≤ v_i. */
export function addSlacks(model: MpcModel, b: QpBuilder, idx: MpcIndex): void {
  const kinds = [
    { soft: model.soft.state, at: idx.stateSlack, names: model.stateNames },
    { soft: model.soft.output, at: idx.outputSlack, names: model.outputNames },
  ];
  for (const { soft, at, names } of kinds) {
    if (!soft) continue;
    at.forEach((zi, i) => {
      if (zi < 0) return;
      b.addQuad(b.pick(zi, 1), [[soft.quadratic[i]]]);
      if (soft.linear[i] !== 0) b.addLinear(zi, soft.linear[i]);
    });
  }
  for (const { soft, at, names } of kinds) {
    if (!soft) continue;
    at.forEach((zi, i) => zi >= 0 && b.addRow(b.pick(zi, 1)[0], -1, 0, `${names[i]}_slack >= 0`));
  }
  for (const { soft, at, names } of kinds) {
    if (!soft) continue;
    at.forEach((zi, i) => {
      const v = soft.maxViolation[i];
      if (zi >= 0 && v !== null) b.addRow(b.pick(zi, 1)[0], 1, v, `${names[i]}_slack <= ${v}`);
    });
  }
}

/** Terminal-set layer: H x(N) ≤ h. */
export function addTerminalSet(model: MpcModel, b: QpBuilder, pred: Prediction): void {
  const ts = model.terminalSet;
  if (!ts) return;
  const rows = b.apply(ts.H, pred.x[model.N]);
  rows.forEach((row, i) => b.addRow(row, 1, ts.h[i], `terminal${i + 1}(${model.N}) <= ${ts.h[i]}`));
}
