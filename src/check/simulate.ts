/**
 * Closed-loop simulation of a table: the plant driven by the table's law u(0), sample by sample,
 * with the online QP solved beside it at every step.
 *
 * At step k the controller sees θ(k), assembled from the table's own θ layout (never re-derived):
 *   state block       ← the measured state x(k) + noise
 *   inputPrev block   ← the input applied at step k−1
 *   reference block   ← r(k) (constant or a piecewise-constant schedule)
 *   disturbance block ← d(k)
 * The plant moves by x(k+1) = A x(k) + B u(k) + Bd d(k), y(k) = C x(k) + Cd d(k) — the nominal
 * model, or a "true" plant of the same dimensions for model mismatch.
 *
 * When θ(k) lies in no region the controller has no law: with `outside: 'hold'` the previous input
 * is held (a common fallback, counted as a step with no region); with `outside: 'stop'` the run ends.
 * Pure: no file access, no printing.
 */
import { randomLcg, randomNormal } from 'd3';
import type { TableFile } from '../table/format.js';
import { applyAffine } from '../table/table.js';
import { clampInputs } from '../table/clamp.js';
import { locateRegion } from '../table/locator.js';
import { tol } from '../tol.js';
import { thetaBlock, type Layout } from '../formulation/layout.js';
import type { Bounds, MpcModel } from '../problem/types.js';

/** Discrete-time plant: x⁺ = A x + B u + Bd d, y = C x + Cd d. */
export interface PlantDynamics {
  A: number[][];
  B: number[][];
  C: number[][];
  /** n×nd, absent or null when the plant has no disturbance input */
  Bd?: number[][] | null;
  /** p×nd */
  Cd?: number[][] | null;
}

export interface Limits {
  input?: Bounds;
  inputRate?: Bounds;
  state?: Bounds;
  output?: Bounds;
}

export interface SignalNames {
  states: string[];
  inputs: string[];
  outputs: string[];
}

/** A piecewise-constant signal: values[i] holds from step steps[i] (ascending, first 0) on. */
export interface Schedule {
  steps: number[];
  values: number[][];
}

/** The law of the online QP at θ (first lawSize entries of z), or null when the QP is infeasible. */
export type OnlineLaw = (theta: ArrayLike<number>) => number[] | null;

export interface SimulationSetup {
  table: TableFile;
  /** the model the table was built for */
  nominal: PlantDynamics;
  /** the plant that actually moves (default: the nominal one) */
  plant?: PlantDynamics;
  /** hard limits: a breach is a violation */
  limits: Limits;
  /** soft state/output limits: a breach is allowed by the formulation, counted apart */
  softLimits?: Pick<Limits, 'state' | 'output'>;
  names: SignalNames;
  /** the online QP, solved at every step beside the table (omit to skip) */
  online?: OnlineLaw;
  steps: number;
  /** reference schedule over the table's reference block (p_t entries) */
  reference?: Schedule;
  /** disturbance schedule (nd entries) */
  disturbance?: Schedule;
  /** Gaussian noise on the measured state: one standard deviation per state, and the seed */
  noise?: { std: number[]; seed: number };
  /** what to do when θ lies in no region (default 'hold') */
  outside?: 'hold' | 'stop';
  /** settling band as a fraction of the parameter box width of the settling signal (default 0.02) */
  settleFraction?: number;
  /** saturate the applied input to the table's input limits (`simulate --clamp`, as `emit --clamp` does in C) */
  clamp?: boolean;
}

export interface StepRecord {
  k: number;
  x: number[];
  y: number[];
  /** θ(k) as the controller saw it */
  theta: number[];
  region: number;
  /** the table's law at θ(k), null when no region holds it */
  uTable: number[] | null;
  /** the online QP's u(0) at θ(k), null when infeasible or not solved */
  uOnline: number[] | null;
  /** the input applied */
  u: number[];
  r: number[];
  d: number[];
}

export interface Violation {
  run: number;
  k: number;
  /** e.g. "x2 <= 1" */
  limit: string;
  value: number;
  excess: number;
}

export interface RunResult {
  run: number;
  records: StepRecord[];
  /** x(steps) after the last step (or at the stop) */
  final: { x: number[]; y: number[] };
  violations: Violation[];
  /** breaches of soft limits (allowed by the formulation, paid for in the cost) */
  softViolations: Violation[];
  noRegionSteps: number;
  onlineInfeasibleSteps: number;
  /** max over steps and inputs of |u_table − u_online| where both exist */
  maxDu: number;
  maxDuStep: number | null;
  ended: 'steps' | 'outside';
  /** y_t − r per tracked output at the end (empty without tracking) */
  offset: number[];
  /** first step from which every settling signal stays inside its band; null when it never does */
  settlingStep: number | null;
}

/** Pull the pieces of θ out by the layout's blocks. */
export function splitTheta(layout: Layout, theta: ArrayLike<number>): { x: number[] | null; uPrev: number[] | null; r: number[]; d: number[] } {
  const take = (kind: 'state' | 'inputPrev' | 'reference' | 'disturbance') => {
    const b = thetaBlock(layout, kind);
    return b ? Array.from({ length: b.size }, (_, i) => theta[b.offset + i]) : null;
  };
  return { x: take('state'), uPrev: take('inputPrev'), r: take('reference') ?? [], d: take('disturbance') ?? [] };
}

function assembleTheta(layout: Layout, ntheta: number, x: number[], uPrev: number[], r: number[], d: number[]): number[] {
  const th = new Array<number>(ntheta).fill(0);
  for (const b of layout.theta) {
    const src = b.kind === 'state' ? x : b.kind === 'inputPrev' ? uPrev : b.kind === 'reference' ? r : b.kind === 'disturbance' ? d : null;
    if (!src) throw new Error(`θ block of kind '${b.kind}' cannot be simulated`);
    // the reference block is r in its own order; the other blocks index their vectors by refersTo
    for (let i = 0; i < b.size; i++) th[b.offset + i] = b.kind === 'reference' ? src[i] : src[b.refersTo[i]];
  }
  return th;
}

const matVec = (M: number[][] | null | undefined, v: number[], rows: number): number[] =>
  Array.from({ length: rows }, (_, i) => (M && M[i] ? M[i].reduce((s, a, j) => s + a * (v[j] ?? 0), 0) : 0));

/** Plant output y = C x + Cd d (p entries, the problem's output units); a new array. */
export function outputOf(plant: PlantDynamics, x: number[], d: number[]): number[] {
  const p = plant.C.length;
  const y = matVec(plant.C, x, p);
  if (plant.Cd && d.length) matVec(plant.Cd, d, p).forEach((v, i) => (y[i] += v));
  return y;
}

/** One sampling period of the plant: x⁺ = A x + B u + Bd d (n entries, state units); a new array. */
export function stepPlant(plant: PlantDynamics, x: number[], u: number[], d: number[]): number[] {
  const n = plant.A.length;
  const xn = matVec(plant.A, x, n);
  matVec(plant.B, u, n).forEach((v, i) => (xn[i] += v));
  if (plant.Bd && d.length) matVec(plant.Bd, d, n).forEach((v, i) => (xn[i] += v));
  return xn;
}

function scheduleAt(s: Schedule | undefined, k: number, fallback: number[]): number[] {
  if (!s || !s.steps.length) return fallback;
  let v = s.values[0];
  for (let i = 0; i < s.steps.length; i++) if (s.steps[i] <= k) v = s.values[i];
  return v;
}

/** Relative margin above which a limit counts as violated: 1e-6 of max(1, |bound|) (rounding of the law, not a breach). */
export const LIMIT_MARGIN = 1e-6;

function checkBounds(b: Bounds | undefined, v: number[], names: string[], prefix: string, run: number, k: number, out: Violation[]): void {
  if (!b) return;
  v.forEach((val, i) => {
    const hi = b.upper[i];
    const lo = b.lower[i];
    const nm = prefix + (names[i] ?? `${i + 1}`);
    if (hi !== null && hi !== undefined && val > hi + LIMIT_MARGIN * Math.max(1, Math.abs(hi)))
      out.push({ run, k, limit: `${nm} <= ${hi}`, value: val, excess: val - hi });
    if (lo !== null && lo !== undefined && val < lo - LIMIT_MARGIN * Math.max(1, Math.abs(lo)))
      out.push({ run, k, limit: `${nm} >= ${lo}`, value: val, excess: lo - val });
  });
}

/**
 * One closed-loop run from x(0) (and u_prev(0), default 0). Reference and disturbance follow their
 * schedules, or are held at `held` when given (runs started from a full θ).
 */
export function simulateRun(setup: SimulationSetup, run: number, x0: number[], uPrev0?: number[], held?: { r: number[]; d: number[] }): RunResult {
  const { table, limits, names } = setup;
  const layout = table.layout;
  const plant = setup.plant ?? setup.nominal;
  const n = setup.nominal.A.length;
  const m = setup.nominal.B[0]?.length ?? 0;
  const refBlock = thetaBlock(layout, 'reference');
  const distBlock = thetaBlock(layout, 'disturbance');
  const nd = distBlock?.size ?? 0;
  const tracked = refBlock ? refBlock.refersTo : [];
  const noise = setup.noise;
  const gauss = noise ? randomNormal.source(randomLcg(noise.seed + 7919 * run))(0, 1) : null;
  const frac = setup.settleFraction ?? 0.02;
  const boxWidth = (j: number) => table.box.upper[j] - table.box.lower[j];
  const stateBlock = thetaBlock(layout, 'state');
  if (!stateBlock || stateBlock.size !== n) throw new Error('the table has no state block of the plant size: not an MPC table');

  let x = x0.slice();
  let uPrev = uPrev0 ? uPrev0.slice() : new Array<number>(m).fill(0);
  const records: StepRecord[] = [];
  const violations: Violation[] = [];
  const softViolations: Violation[] = [];
  const soft = setup.softLimits ?? {};
  const checkStateOutput = (xk: number[], yk: number[], kk: number) => {
    checkBounds(limits.state, xk, names.states, '', run, kk, violations);
    checkBounds(limits.output, yk, names.outputs, '', run, kk, violations);
    checkBounds(soft.state, xk, names.states, '', run, kk, softViolations);
    checkBounds(soft.output, yk, names.outputs, '', run, kk, softViolations);
  };
  let noRegion = 0;
  let onlineInfeasible = 0;
  let maxDu = 0;
  let maxDuStep: number | null = null;
  let ended: RunResult['ended'] = 'steps';
  const inBand: boolean[] = [];
  const bandOk = (xk: number[], yk: number[], r: number[]): boolean => {
    if (refBlock) return tracked.every((o, i) => Math.abs(yk[o] - r[i]) <= frac * Math.max(boxWidth(refBlock.offset + i), 1e-12));
    return stateBlock.refersTo.every((s, i) => Math.abs(xk[s]) <= frac * Math.max(boxWidth(stateBlock.offset + i), 1e-12));
  };

  let k = 0;
  let r: number[] = [];
  let d: number[] = [];
  for (; k < setup.steps; k++) {
    r = held ? held.r : scheduleAt(setup.reference, k, []);
    d = held ? held.d : scheduleAt(setup.disturbance, k, new Array<number>(nd).fill(0));
    const y = outputOf(plant, x, d);
    if (k > 0) checkStateOutput(x, y, k);
    inBand.push(bandOk(x, y, r));
    const xm = gauss ? x.map((v, i) => v + (noise!.std[i] ?? 0) * gauss()) : x;
    const theta = assembleTheta(layout, table.dims.ntheta, xm, uPrev, r, d);
    const region = locateRegion(table.regions, theta, tol.inside, table.box);
    const uTable = region >= 0 ? applyAffine(table.regions[region].law, theta) : null;
    const uOnline = setup.online ? setup.online(theta) : null;
    if (setup.online && !uOnline) onlineInfeasible++;
    if (uTable && uOnline) {
      for (let i = 0; i < uTable.length; i++) {
        const du = Math.abs(uTable[i] - uOnline[i]);
        if (du > maxDu) {
          maxDu = du;
          maxDuStep = k;
        }
      }
    }
    if (!uTable) {
      noRegion++;
      if ((setup.outside ?? 'hold') === 'stop') {
        records.push({ k, x: x.slice(), y, theta, region, uTable, uOnline, u: uPrev.slice(), r, d });
        ended = 'outside';
        break;
      }
    }
    const u = uTable ? (setup.clamp ? clampInputs(uTable, table.inputLimits) : uTable) : uPrev.slice();
    records.push({ k, x: x.slice(), y, theta, region, uTable, uOnline, u, r, d });
    checkBounds(limits.input, u, names.inputs, '', run, k, violations);
    checkBounds(
      limits.inputRate,
      u.map((v, i) => v - uPrev[i]),
      names.inputs,
      'd',
      run,
      k,
      violations,
    );
    x = stepPlant(plant, x, u, d);
    uPrev = u.slice();
  }
  const yEnd = outputOf(plant, x, d);
  if (ended === 'steps') {
    checkStateOutput(x, yEnd, k);
    inBand.push(bandOk(x, yEnd, r));
  }
  let settlingStep: number | null = null;
  if (ended === 'steps' && inBand[inBand.length - 1]) {
    let s = inBand.length - 1;
    while (s > 0 && inBand[s - 1]) s--;
    settlingStep = s;
  }
  return {
    run,
    records,
    final: { x, y: yEnd },
    violations,
    softViolations,
    noRegionSteps: noRegion,
    onlineInfeasibleSteps: onlineInfeasible,
    maxDu,
    maxDuStep,
    ended,
    offset: tracked.map((o, i) => yEnd[o] - r[i]),
    settlingStep,
  };
}

/** A run started from a full θ of the table: x(0), u_prev(0), and r, d held at θ's values. */
export function simulateFromTheta(setup: SimulationSetup, run: number, theta: ArrayLike<number>): RunResult {
  const parts = splitTheta(setup.table.layout, theta);
  if (!parts.x) throw new Error('the table has no state block: not an MPC table');
  return simulateRun(setup, run, parts.x, parts.uPrev ?? undefined, { r: parts.r, d: parts.d });
}

export interface SimulationSummary {
  runs: number;
  steps: number;
  /** max |u_table − u_online| over all runs and steps, with where */
  maxDu: number;
  maxDuAt: { run: number; k: number } | null;
  onlineInfeasibleSteps: number;
  noRegionSteps: number;
  /** runs that left every region at least once */
  runsOutside: number;
  violations: number;
  /** steps × limits where a soft limit was exceeded (allowed), and the worst excess */
  softViolations: number;
  softMaxExcess: number;
  /** per limit: count and worst excess */
  violationsByLimit: { limit: string; count: number; maxExcess: number; first: { run: number; k: number } }[];
  /** per tracked output: the largest |y − r| at the end over the runs */
  offset: { output: string; maxAbs: number }[];
  /** runs that settled, and the largest settling step among them */
  settled: number;
  maxSettlingStep: number | null;
  settleFraction: number;
}

/**
 * Figures over a set of runs: max |u_table − u_online|, steps with no region or an infeasible online
 * QP, limit violations per limit, final offsets of tracked outputs, settling. Plain numbers, new object.
 */
export function summarise(setup: SimulationSetup, runs: RunResult[]): SimulationSummary {
  let maxDu = 0;
  let maxDuAt: SimulationSummary['maxDuAt'] = null;
  const byLimit = new Map<string, { limit: string; count: number; maxExcess: number; first: { run: number; k: number } }>();
  for (const r of runs) {
    if (r.maxDuStep !== null && r.maxDu >= maxDu) {
      if (r.maxDu > maxDu || !maxDuAt) maxDuAt = { run: r.run, k: r.maxDuStep };
      maxDu = r.maxDu;
    }
    for (const v of r.violations) {
      const e = byLimit.get(v.limit);
      if (e) {
        e.count++;
        e.maxExcess = Math.max(e.maxExcess, v.excess);
      } else byLimit.set(v.limit, { limit: v.limit, count: 1, maxExcess: v.excess, first: { run: v.run, k: v.k } });
    }
  }
  const refBlock = thetaBlock(setup.table.layout, 'reference');
  const offset = (refBlock?.refersTo ?? []).map((o, i) => ({
    output: setup.names.outputs[o] ?? `y${o + 1}`,
    maxAbs: Math.max(0, ...runs.map((r) => Math.abs(r.offset[i] ?? 0))),
  }));
  const settledRuns = runs.filter((r) => r.settlingStep !== null);
  return {
    runs: runs.length,
    steps: setup.steps,
    maxDu,
    maxDuAt,
    onlineInfeasibleSteps: runs.reduce((s, r) => s + r.onlineInfeasibleSteps, 0),
    noRegionSteps: runs.reduce((s, r) => s + r.noRegionSteps, 0),
    runsOutside: runs.filter((r) => r.noRegionSteps > 0).length,
    violations: runs.reduce((s, r) => s + r.violations.length, 0),
    softViolations: runs.reduce((s, r) => s + r.softViolations.length, 0),
    softMaxExcess: Math.max(0, ...runs.flatMap((r) => r.softViolations.map((v) => v.excess))),
    violationsByLimit: [...byLimit.values()],
    offset,
    settled: settledRuns.length,
    maxSettlingStep: settledRuns.length ? Math.max(...settledRuns.map((r) => r.settlingStep!)) : null,
    settleFraction: setup.settleFraction ?? 0.02,
  };
}

/** The nominal closed loop failed: it left every region, or broke a hard limit. */
export function nominalFailure(summary: SimulationSummary): boolean {
  return summary.noRegionSteps > 0 || summary.violations > 0;
}

/** CSV time series: one line per run and step. */
export function simulationCsv(setup: SimulationSetup, runs: RunResult[]): string {
  const { names } = setup;
  const refBlock = thetaBlock(setup.table.layout, 'reference');
  const distBlock = thetaBlock(setup.table.layout, 'disturbance');
  const refNames = refBlock ? refBlock.names : [];
  const distNames = distBlock ? distBlock.names : [];
  const header = [
    'run',
    'step',
    ...names.states,
    ...names.outputs.map((o) => `y_${o}`),
    'region',
    ...names.inputs,
    ...names.inputs.map((u) => `${u}_online`),
    'du_max',
    ...refNames,
    ...distNames,
  ];
  const s = (v: number) => String(v);
  const lines = [header.join(',')];
  for (const r of runs)
    for (const rec of r.records) {
      const du = rec.uTable && rec.uOnline ? Math.max(...rec.uTable.map((v, i) => Math.abs(v - rec.uOnline![i]))) : null;
      lines.push(
        [
          r.run,
          rec.k,
          ...rec.x.map(s),
          ...rec.y.map(s),
          rec.region,
          ...rec.u.map(s),
          ...(rec.uOnline ? rec.uOnline.map(s) : names.inputs.map(() => '')),
          du === null ? '' : s(du),
          ...rec.r.map(s),
          ...rec.d.map(s),
        ].join(','),
      );
    }
  return lines.join('\n') + '\n';
}

/** Hard and soft limits of a model: soft state/output limits are taken out of the hard ones. */
export function limitsOf(model: Pick<MpcModel, 'constraints'> & { soft?: { state: unknown; output: unknown } }): { hard: Limits; soft: Pick<Limits, 'state' | 'output'> } {
  const c = model.constraints;
  const softState = !!model.soft?.state;
  const softOutput = !!model.soft?.output;
  return {
    hard: { input: c.input, inputRate: c.inputRate, state: softState ? undefined : c.state, output: softOutput ? undefined : c.output },
    soft: { state: softState ? c.state : undefined, output: softOutput ? c.output : undefined },
  };
}

/** The plant of a validated model (disturbance matrices when the model has them). */
export function plantOf(model: Pick<MpcModel, 'A' | 'B' | 'C'> & { Bd?: number[][] | null; Cd?: number[][] | null }): PlantDynamics {
  return { A: model.A, B: model.B, C: model.C, Bd: model.Bd ?? null, Cd: model.Cd ?? null };
}

/** Seeded initial states that the table covers: x(0) and u_prev(0) uniform in their box blocks, r and d as given. */
export function sampleCoveredStarts(table: TableFile, count: number, seed: number, r: number[], d: number[], maxTries = 1000 * count): { x: number[]; uPrev: number[] | undefined }[] {
  const layout = table.layout;
  const rnd = randomLcg(seed);
  const sb = thetaBlock(layout, 'state');
  const pb = thetaBlock(layout, 'inputPrev');
  if (!sb) throw new Error('the table has no state block: not an MPC table');
  const draw = (b: { offset: number; size: number }) => Array.from({ length: b.size }, (_, i) => table.box.lower[b.offset + i] + rnd() * (table.box.upper[b.offset + i] - table.box.lower[b.offset + i]));
  const out: { x: number[]; uPrev: number[] | undefined }[] = [];
  for (let t = 0; t < maxTries && out.length < count; t++) {
    const xs = draw(sb);
    const up = pb ? draw(pb) : [];
    const x = new Array<number>(sb.size);
    sb.refersTo.forEach((s, i) => (x[s] = xs[i]));
    const uPrev = pb ? new Array<number>(pb.size) : undefined;
    if (pb && uPrev) pb.refersTo.forEach((s, i) => (uPrev[s] = up[i]));
    const th = assembleTheta(layout, table.dims.ntheta, x, uPrev ?? [], r, d);
    if (locateRegion(table.regions, th, tol.inside, table.box) >= 0) out.push({ x, uPrev });
  }
  return out;
}
