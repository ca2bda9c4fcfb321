import { parseDocument } from 'yaml';
import { InputError } from '../io/input-error.js';
import { findDuplicateKey } from '../io/duplicate-keys.js';
import { tol } from '../tol.js';
import { Checker, describe, join, type Obj } from './check.js';
import { eye, mul, spectralRadius, symmetrise, transpose, unstabilisableMode, add, zeros, type Mat } from './dense.js';
import { solveDare, solveLyapunovGain } from './riccati.js';
import type { Bounds, LoadedProblem, MpcModel, SoftLimits, TerminalKind, TerminalSet } from './types.js';
import type { MpqpProblem } from '../mpqp/types.js';
import { targetMapOf } from '../formulation/target.js';
import { invariantSet } from '../formulation/terminal.js';
import { discretiseZoh } from './zoh.js';

const MPC_KEYS = ['plant', 'horizon', 'controlHorizon', 'weights', 'constraints', 'tracking'] as const;
const TOP_KEYS = ['name', 'description', ...MPC_KEYS, 'parameters', 'names', 'mpqp'] as const;
const PLANT_KEYS = ['A', 'B', 'C', 'Bd', 'Cd', 'timeDomain', 'sampleTime'] as const;
const WEIGHT_KEYS = ['state', 'output', 'input', 'inputRate', 'terminal'] as const;
const LIMIT_KEYS = ['input', 'inputRate', 'state', 'output'] as const;
const CONSTRAINT_KEYS = [...LIMIT_KEYS, 'terminal'] as const;
const BOUND_KEYS = ['lower', 'upper'] as const;
const SOFT_BOUND_KEYS = ['lower', 'upper', 'soft'] as const;
const SOFT_KEYS = ['quadratic', 'linear', 'maxViolation'] as const;
const TRACKING_KEYS = ['outputs'] as const;
const NAME_KEYS = ['states', 'inputs', 'outputs', 'disturbances'] as const;
const TERMINAL_WORDS = ['riccati', 'stage', 'none'] as const;
const NAME_PATTERN = /^[A-Za-z_][A-Za-z0-9_]*$/;

/** Extension of a file name, lower case with the dot ("" when none); pure stand-in for path.extname. */
function fileExtension(file: string): string {
  const base = file.slice(file.lastIndexOf('/') + 1);
  const dot = base.lastIndexOf('.');
  return dot > 0 ? base.slice(dot).toLowerCase() : '';
}

/** Base name without its extension; pure stand-in for path.basename(file, path.extname(file)). */
function fileStem(file: string): string {
  const base = file.slice(file.lastIndexOf('/') + 1);
  const dot = base.lastIndexOf('.');
  return dot > 0 ? base.slice(0, dot) : base;
}

/**
 * Parse and validate the text of a problem file: YAML when `file` ends in `.yaml`/`.yml`, JSON
 * otherwise. `file` names the source in error messages and gives the default problem name.
 */
export function parseProblemText(text: string, file: string): LoadedProblem {
  const ext = fileExtension(file);
  const raw = ext === '.yaml' || ext === '.yml' ? parseYaml(text, file) : parseJson(text, file);
  const dup = findDuplicateKey(text);
  if (dup) throw new InputError(file, dup.path, `key given twice (again at line ${dup.line} column ${dup.column}); remove one`);
  return parseProblem(raw, file);
}

function lineColumn(text: string, pos: number): string {
  const before = text.slice(0, pos);
  const line = before.split('\n').length;
  const col = pos - before.lastIndexOf('\n');
  return `line ${line} column ${col}`;
}

function parseJson(text: string, file: string): unknown {
  try {
    return JSON.parse(text);
  } catch (e) {
    const msg = (e as Error).message;
    let pos: number | null = null;
    const at = /at position (\d+)/.exec(msg);
    if (at) pos = Number(at[1]);
    else {
      // V8 omits the position for "Unexpected token"; the shortest prefix that fails the same way ends at the token.
      const kind = msg.split(',')[0];
      let lo = 1;
      let hi = text.length;
      while (lo < hi) {
        const mid = (lo + hi) >> 1;
        let same = false;
        try {
          JSON.parse(text.slice(0, mid));
        } catch (e2) {
          same = (e2 as Error).message.split(',')[0] === kind;
        }
        if (same) hi = mid;
        else lo = mid + 1;
      }
      pos = lo - 1;
    }
    const tok = /^Unexpected token '(.*?)', /.exec(msg);
    const what = tok ? `unexpected token '${tok[1]}'` : msg.split('\n')[0].replace(/ in JSON at position \d+.*$/, '');
    throw new InputError(file, '(file)', `invalid JSON at ${lineColumn(text, pos)}: ${what}`);
  }
}

function parseYaml(text: string, file: string): unknown {
  const doc = parseDocument(text, { prettyErrors: true, uniqueKeys: false });
  const err = doc.errors[0];
  if (err) {
    const first = err.message.split('\n')[0].replace(/ at line \d+, column \d+:?$/, '');
    const lp = err.linePos?.[0];
    throw new InputError(file, '(file)', `invalid YAML at ${lp ? `line ${lp.line} column ${lp.col}` : 'unknown position'}: ${first}`);
  }
  return doc.toJS();
}

function defaultNames(prefix: string, k: number): string[] {
  return Array.from({ length: k }, (_, i) => `${prefix}${i + 1}`);
}

/** Validate a parsed problem document completely, then build the model (discretisation, terminal weight). */
export function parseProblem(raw: unknown, file: string): LoadedProblem {
  const c: Checker = new Checker(file);
  const top = c.object(raw, '', TOP_KEYS);
  if (top.mpqp !== undefined) {
    const clash = MPC_KEYS.find((k) => top[k] !== undefined);
    if (clash) c.fail(clash, `"${clash}" cannot be combined with "mpqp": a file holds either an MPC problem or an mpQP`);
    return parseDirectMpqp(c, top, file);
  }

  // ---- structure, types, dimensions (nothing computed yet) ----
  const plant = c.object(c.require(top, '', 'plant', 'the plant model {A, B}'), 'plant', PLANT_KEYS);
  c.require(top, '', 'horizon', 'prediction horizon N ≥ 1');
  const weights = c.object(c.require(top, '', 'weights', 'stage weights {state|output, input}'), 'weights', WEIGHT_KEYS);
  const params = c.object(c.require(top, '', 'parameters', 'the parameter box {lower, upper}'), 'parameters', BOUND_KEYS);

  const name = problemName(c, top, file);

  const A0 = c.matrix(c.require(plant, 'plant', 'A', 'n×n state matrix'), 'plant.A');
  const n = A0.length;
  if (A0[0].length !== n) c.fail('plant.A', `expected a square matrix, got ${n}×${A0[0].length}`);
  const B0 = c.matrix(c.require(plant, 'plant', 'B', 'n×m input matrix'), 'plant.B', n, undefined, 'n rows as plant.A');
  const m = B0[0].length;
  const C = plant.C === undefined ? eye(n) : c.matrix(plant.C, 'plant.C', undefined, n, 'n columns as plant.A');
  const p = C.length;
  let Bd0: Mat | null = plant.Bd === undefined ? null : c.matrix(plant.Bd, 'plant.Bd', n, undefined, 'n rows as plant.A');
  let Cd: Mat | null = plant.Cd === undefined ? null : c.matrix(plant.Cd, 'plant.Cd', p, Bd0 ? Bd0[0].length : undefined, `p rows as plant.C${Bd0 ? ', n_d columns as plant.Bd' : ''}`);
  const nd = Bd0 ? Bd0[0].length : Cd ? Cd[0].length : 0;
  if (nd > 0) {
    Bd0 ??= zeros(n, nd);
    Cd ??= zeros(p, nd);
  }

  let timeDomain: 'discrete' | 'continuous' = 'discrete';
  if (plant.timeDomain !== undefined) {
    const td = c.string(plant.timeDomain, 'plant.timeDomain');
    if (td !== 'discrete' && td !== 'continuous')
      c.fail('plant.timeDomain', `expected "discrete" or "continuous", got ${JSON.stringify(td)}`);
    timeDomain = td as 'discrete' | 'continuous';
  }
  let sampleTime: number | null = null;
  if (plant.sampleTime !== undefined) {
    sampleTime = c.number(plant.sampleTime, 'plant.sampleTime');
    if (!(sampleTime > 0)) c.fail('plant.sampleTime', `sample time must be > 0 seconds, got ${sampleTime}`);
  } else if (timeDomain === 'continuous')
    c.fail('plant.sampleTime', 'missing required key: a continuous-time plant needs sampleTime > 0 (seconds) for the zero-order hold');

  const N = c.integer(top.horizon, 'horizon', 1, Infinity, 'prediction horizon N');
  const Nu = top.controlHorizon === undefined ? N : c.integer(top.controlHorizon, 'controlHorizon', 1, N, 'control horizon Nu (1 ≤ Nu ≤ horizon)');

  const hasState = weights.state !== undefined;
  const hasOutput = weights.output !== undefined;
  if (hasState === hasOutput)
    c.fail(
      hasState ? 'weights.output' : 'weights.state',
      hasState ? 'give exactly one of weights.state and weights.output, not both' : 'missing required key: give exactly one of weights.state (n×n) and weights.output (p×p)',
    );
  let Qstage: Mat;
  if (hasState) {
    Qstage = c.matrix(weights.state, 'weights.state', n, n, 'n×n with n = rows of plant.A');
    c.psd(Qstage, 'weights.state');
  } else {
    const Qy = c.matrix(weights.output, 'weights.output', p, p, 'p×p with p = rows of plant.C');
    c.psd(Qy, 'weights.output');
    Qstage = mul(transpose(C), mul(Qy, C));
  }
  const R = c.matrix(c.require(weights, 'weights', 'input', 'm×m input weight R, positive definite'), 'weights.input', m, m, 'm×m with m = columns of plant.B');
  c.pd(R, 'weights.input');
  let S: Mat | null = null;
  if (weights.inputRate !== undefined) {
    S = c.matrix(weights.inputRate, 'weights.inputRate', m, m, 'm×m with m = columns of plant.B');
    c.psd(S, 'weights.inputRate');
  }

  let terminal: TerminalKind = 'riccati';
  let terminalMatrix: Mat | null = null;
  let gainK: Mat | null = null;
  const tw = weights.terminal;
  if (tw !== undefined) {
    if (typeof tw === 'string') {
      if (!(TERMINAL_WORDS as readonly string[]).includes(tw))
        c.fail('weights.terminal', `expected "riccati", "stage", "none", {"lyapunovGain": K} or an n×n matrix, got ${JSON.stringify(tw)}`);
      terminal = tw as TerminalKind;
    } else if (Array.isArray(tw)) {
      terminal = 'matrix';
      terminalMatrix = c.matrix(tw, 'weights.terminal', n, n, 'n×n terminal weight');
      c.psd(terminalMatrix, 'weights.terminal');
    } else {
      const o = c.object(tw, 'weights.terminal', ['lyapunovGain']);
      terminal = 'lyapunovGain';
      gainK = c.matrix(c.require(o, 'weights.terminal', 'lyapunovGain', 'm×n gain K with A − BK stable'), 'weights.terminal.lyapunovGain', m, n, 'm×n');
    }
  }

  const dims = { input: m, inputRate: m, state: n, output: p } as const;
  const constraints: MpcModel['constraints'] = {};
  const soft: MpcModel['soft'] = { state: null, output: null };
  let wantTerminalSet = false;
  if (top.constraints !== undefined) {
    const co = c.object(top.constraints, 'constraints', CONSTRAINT_KEYS);
    for (const kind of LIMIT_KEYS) {
      if (co[kind] === undefined) continue;
      const softable = kind === 'state' || kind === 'output';
      const key = `constraints.${kind}`;
      const o = c.object(co[kind], key, softable ? SOFT_BOUND_KEYS : BOUND_KEYS);
      constraints[kind] = bounds(c, o, key, dims[kind]);
      if (softable && o.soft !== undefined) soft[kind] = softLimits(c, o.soft, `${key}.soft`, dims[kind]);
    }
    if (co.terminal !== undefined) {
      const tk = c.string(co.terminal, 'constraints.terminal');
      if (tk !== 'invariant') c.fail('constraints.terminal', `expected "invariant", got ${JSON.stringify(tk)}`);
      wantTerminalSet = true;
    }
  }
  const hasRate = S !== null || constraints.inputRate !== undefined;

  let tracked: number[] | null = null;
  if (top.tracking !== undefined) {
    const tr = c.object(top.tracking, 'tracking', TRACKING_KEYS);
    if (tr.outputs === undefined) tracked = Array.from({ length: p }, (_, i) => i);
    else {
      tracked = c.array(tr.outputs, 'tracking.outputs').map((v, i) => c.integer(v, `tracking.outputs[${i}]`, 0, p - 1, `output index (0-based, p = ${p})`));
      if (tracked.length === 0) c.fail('tracking.outputs', 'expected at least one output index (omit "outputs" to track every output)');
      tracked.forEach((v, i) => {
        if (tracked!.indexOf(v) !== i) c.fail(`tracking.outputs[${i}]`, `output ${v} is listed twice`);
      });
    }
  }
  const pt = tracked?.length ?? 0;
  const ntheta = n + (hasRate ? m : 0) + pt + nd;

  const stateNames = names(c, top.names, 'states', n, defaultNames('x', n));
  const inputNames = names(c, top.names, 'inputs', m, defaultNames('u', m));
  const outputNames = names(c, top.names, 'outputs', p, defaultNames('y', p));
  const disturbanceNames = names(c, top.names, 'disturbances', nd, defaultNames('d', nd));
  const thetaNames = [
    ...stateNames,
    ...(hasRate ? inputNames.map((s) => `${s}_prev`) : []),
    ...(tracked ?? []).map((i) => `${outputNames[i]}_ref`),
    ...disturbanceNames,
  ];
  const clash = thetaNames.findIndex((s, i) => thetaNames.indexOf(s) !== i);
  if (clash >= 0) {
    const first = thetaNames.indexOf(thetaNames[clash]);
    const mr = hasRate ? m : 0;
    const owner = (i: number): [string, string] =>
      i < n
        ? [`names.states[${i}]`, 'state']
        : i < n + mr
          ? [`names.inputs[${i - n}]`, 'previous-input']
          : i < n + mr + pt
            ? [`names.outputs[${tracked![i - n - mr]}]`, 'reference']
            : [`names.disturbances[${i - n - mr - pt}]`, 'disturbance'];
    const [key, kind] = owner(first);
    c.fail(key, `${kind} name ${JSON.stringify(thetaNames[clash])} clashes with the ${owner(clash)[1]} parameter of the same name`);
  }

  const { lower, upper } = parameterBox(c, params, thetaNames, `dim θ = ${ntheta}: ${thetaNames.join(', ')}`);

  // ---- model building and system-theoretic checks ----
  let A = A0;
  let B = B0;
  let Bd = Bd0;
  if (timeDomain === 'continuous') {
    // exp([[A, B, Bd], [0, 0, 0]]·T): B and Bd discretised together by zero-order hold
    const d = discretiseZoh(A0, B0.map((row, i) => [...row, ...(Bd0 ? Bd0[i] : [])]), sampleTime as number);
    A = d.A;
    B = d.B.map((row) => row.slice(0, m));
    Bd = Bd0 ? d.B.map((row) => row.slice(m)) : null;
  }
  if (![...A, ...B, ...(Bd ?? [])].every((r) => r.every(Number.isFinite)))
    c.fail('plant.sampleTime', 'zero-order-hold discretisation overflowed (A·sampleTime too large)');

  let lqrGain: Mat | null = null;
  let riccatiError: string | null = null;
  let Pric: Mat | null = null;
  const bad = unstabilisableMode(A, B);
  if (bad) {
    riccatiError = `(A, B) is not stabilisable: the mode λ = ${fmtEig(bad)} (|λ| ≥ 1) is uncontrollable (PBH test, rank tolerance tol.rank)`;
  } else {
    try {
      const d = solveDare(A, B, Qstage, R);
      Pric = d.P;
      lqrGain = d.K;
    } catch (e) {
      riccatiError = (e as Error).message;
    }
  }

  let P: Mat;
  switch (terminal) {
    case 'riccati':
      if (!Pric) c.fail('weights.terminal', `terminal "riccati" needs the DARE solution: ${riccatiError}`);
      P = Pric;
      break;
    case 'stage':
      P = Qstage;
      break;
    case 'none':
      P = Qstage.map((r) => r.map(() => 0));
      break;
    case 'matrix':
      P = terminalMatrix as Mat;
      break;
    case 'lyapunovGain': {
      const K = gainK as Mat;
      const rho = spectralRadius(add(A, mul(B, K), -1));
      if (!(rho < 1 - tol.stability))
        c.fail(
          'weights.terminal.lyapunovGain',
          `A − BK is not stable: spectral radius ${rho.toPrecision(6)} ≥ 1 − tol.stability${timeDomain === 'continuous' ? ' (A, B after zero-order hold)' : ''}`,
        );
      try {
        P = solveLyapunovGain(A, B, Qstage, R, K);
      } catch (e) {
        c.fail('weights.terminal.lyapunovGain', (e as Error).message);
      }
      break;
    }
  }

  if (tracked) {
    const t = targetMapOf(A, B, C, Bd, Cd, tracked);
    if (!t.ok) c.fail(top.tracking !== undefined && (top.tracking as Obj).outputs !== undefined ? 'tracking.outputs' : 'tracking', t.reason);
  }

  let terminalSet: TerminalSet | null = null;
  if (wantTerminalSet) {
    const why = tracked ? 'tracking' : nd > 0 ? 'a disturbance model (plant.Bd/plant.Cd)' : soft.state || soft.output ? 'soft limits' : null;
    if (why)
      c.fail('constraints.terminal', `the terminal invariant set cannot be combined with ${why}: the set is computed for regulation to the origin with hard limits`);
    if (!lqrGain) c.fail('constraints.terminal', `the terminal invariant set needs the LQR gain of (A, B, Q, R): ${riccatiError}`);
    const res = invariantSet(A, B, C, lqrGain, constraints);
    if (!res.ok) c.fail('constraints.terminal', res.reason);
    terminalSet = res.set;
  }

  const model: MpcModel = {
    name,
    n,
    m,
    p,
    A,
    B,
    C,
    nd,
    Bd,
    Cd,
    tracking: tracked ? { outputs: tracked } : null,
    sampleTime,
    N,
    Nu,
    Q: Qstage,
    R,
    S,
    P,
    terminal,
    lqrGain,
    constraints,
    soft,
    terminalSet,
    box: { lower, upper },
    hasRate,
    thetaNames,
    inputNames,
    stateNames,
    outputNames,
    disturbanceNames,
  };
  return { file, raw, name, model, direct: null };
}

/** One value per component: a number for all, or an array of `dim` numbers (null allowed when `nullable`). */
function perComponent(c: Checker, v: unknown, key: string, dim: number, nullable = false): (number | null)[] {
  if (typeof v === 'number') return new Array<number>(dim).fill(c.number(v, key));
  if (!Array.isArray(v)) c.fail(key, `expected a number or an array of ${dim} numbers (one per component), got ${describe(v)}`);
  return c.array(v, key, dim, 'one per component').map((x, i) => (nullable && x === null ? null : c.number(x, `${key}[${i}]`)));
}

function softLimits(c: Checker, v: unknown, key: string, dim: number): SoftLimits {
  const o = c.object(v, key, SOFT_KEYS);
  const q = perComponent(c, c.require(o, key, 'quadratic', 'quadratic slack weight q > 0'), `${key}.quadratic`, dim) as number[];
  q.forEach((x, i) => {
    if (!(x > 0)) c.fail(typeof o.quadratic === 'number' ? `${key}.quadratic` : `${key}.quadratic[${i}]`, `quadratic slack weight must be > 0, got ${x}`);
  });
  const l = o.linear === undefined ? new Array<number>(dim).fill(0) : (perComponent(c, o.linear, `${key}.linear`, dim) as number[]);
  l.forEach((x, i) => {
    if (!(x >= 0)) c.fail(typeof o.linear === 'number' ? `${key}.linear` : `${key}.linear[${i}]`, `linear slack weight must be ≥ 0, got ${x}`);
  });
  const mv = o.maxViolation === undefined ? new Array<null>(dim).fill(null) : perComponent(c, o.maxViolation, `${key}.maxViolation`, dim, true);
  mv.forEach((x, i) => {
    if (x !== null && !(x > 0)) c.fail(typeof o.maxViolation === 'number' ? `${key}.maxViolation` : `${key}.maxViolation[${i}]`, `maximum violation must be > 0, got ${x}`);
  });
  return { quadratic: q, linear: l, maxViolation: mv };
}

const MPQP_KEYS = ['H', 'F', 'c', 'Y', 'G', 'w', 'E', 'outputs'] as const;
const MPQP_NAME_KEYS = ['parameters', 'decisions'] as const;

/** A directly given mpQP: min ½zᵀHz + (Fθ + c)ᵀz + ½θᵀYθ s.t. Gz ≤ w + Eθ, θ in the box. */
function parseDirectMpqp(c: Checker, top: Obj, file: string): LoadedProblem {
  const q = c.object(top.mpqp, 'mpqp', MPQP_KEYS);
  const params = c.object(c.require(top, '', 'parameters', 'the parameter box {lower, upper}'), 'parameters', BOUND_KEYS);
  const name = problemName(c, top, file);
  const H = c.matrix(c.require(q, 'mpqp', 'H', 'n_z×n_z Hessian, symmetric positive definite'), 'mpqp.H');
  const nz = H.length;
  if (H[0].length !== nz) c.fail('mpqp.H', `expected a square matrix, got ${nz}×${H[0].length}`);
  c.pd(H, 'mpqp.H');
  const F = c.matrix(c.require(q, 'mpqp', 'F', 'n_z×n_θ parameter coupling'), 'mpqp.F', nz, undefined, 'n_z rows as mpqp.H');
  const nt = F[0].length;
  const vec = (v: unknown, key: string, len: number, what: string) => c.array(v, key, len, what).map((x, i) => c.number(x, `${key}[${i}]`));
  const cv = q.c === undefined ? new Array<number>(nz).fill(0) : vec(q.c, 'mpqp.c', nz, 'n_z entries as mpqp.H');
  let Y: Mat = zeros(nt, nt);
  if (q.Y !== undefined) {
    Y = c.matrix(q.Y, 'mpqp.Y', nt, nt, 'n_θ×n_θ with n_θ = columns of mpqp.F');
    c.symmetric(Y, 'mpqp.Y');
  }
  const given = (['G', 'w', 'E'] as const).filter((k) => q[k] !== undefined);
  let G: Mat = [];
  let w: number[] = [];
  let E: Mat = [];
  if (given.length > 0) {
    for (const k of ['G', 'w', 'E'] as const) if (q[k] === undefined) c.fail(`mpqp.${k}`, `missing key: mpqp.G, mpqp.w and mpqp.E come together (G z ≤ w + E θ)`);
    const nc = c.array(q.G, 'mpqp.G').length;
    if (nc > 0) {
      G = c.matrix(q.G, 'mpqp.G', undefined, nz, 'n_c×n_z, n_z = rows of mpqp.H');
      w = vec(q.w, 'mpqp.w', nc, 'n_c entries, one per row of mpqp.G');
      E = c.matrix(q.E, 'mpqp.E', nc, nt, 'n_c×n_θ: rows of mpqp.G, columns of mpqp.F');
    } else {
      vec(q.w, 'mpqp.w', 0, 'no rows, as mpqp.G');
      c.array(q.E, 'mpqp.E', 0, 'no rows, as mpqp.G');
    }
  }
  const k = q.outputs === undefined ? nz : c.integer(q.outputs, 'mpqp.outputs', 1, nz, `law size k (1 ≤ k ≤ n_z = ${nz})`);
  const nameObj = top.names === undefined ? {} : c.object(top.names, 'names', MPQP_NAME_KEYS);
  const identifiers = (v: unknown, key: string, dim: number, fallback: string[]) => (v === undefined ? fallback : nameList(c, v, key, dim));
  const thetaNames = identifiers(nameObj.parameters, 'names.parameters', nt, defaultNames('t', nt));
  const zNames = identifiers(nameObj.decisions, 'names.decisions', nz, defaultNames('z', nz));
  const { lower, upper } = parameterBox(c, params, thetaNames, `dim θ = ${nt}: columns of mpqp.F`);
  const flat = (M: Mat) => Float64Array.from(M.flat());
  const nc = G.length;
  const labels = Array.from({ length: nc }, (_, i) => `row ${i + 1}`);
  const direct: MpqpProblem = {
    nz,
    ntheta: nt,
    lawSize: k,
    nc,
    H: flat(symmetrise(H)),
    F: flat(F),
    c: Float64Array.from(cv),
    Y: flat(symmetrise(Y)),
    G: flat(G),
    w: Float64Array.from(w),
    E: flat(E),
    box: { lower: Float64Array.from(lower), upper: Float64Array.from(upper) },
    labels,
    mergedFrom: labels.map((_, i) => [i]),
    thetaNames,
    lawNames: zNames.slice(0, k),
  };
  return { file, raw: top, name, model: null, direct, decisionNames: zNames };
}

/** The problem's `name` (else the file's base name); checks `description` too. */
function problemName(c: Checker, top: Obj, file: string): string {
  let name = fileStem(file);
  if (top.name !== undefined) {
    name = c.string(top.name, 'name');
    if (name.trim() === '') c.fail('name', 'expected a non-empty string');
  }
  if (top.description !== undefined) c.string(top.description, 'description');
  return name;
}

/** `parameters.lower/upper`: one finite slot per θ entry, lower < upper in each. */
function parameterBox(c: Checker, params: Obj, thetaNames: string[], what: string): { lower: number[]; upper: number[] } {
  const nt = thetaNames.length;
  const side = (s: 'lower' | 'upper') =>
    c.array(c.require(params, 'parameters', s, `${s} corner of the θ box`), `parameters.${s}`, nt, what).map((v, i) => c.number(v, `parameters.${s}[${i}]`));
  const lower = side('lower');
  const upper = side('upper');
  for (let i = 0; i < nt; i++)
    if (!(lower[i] < upper[i]))
      c.fail(`parameters.lower[${i}]`, `box must have lower < upper in every slot, got lower ${lower[i]} ≥ upper ${upper[i]} (${thetaNames[i]})`);
  return { lower, upper };
}

function fmtEig(e: { re: number; im: number }): string {
  const re = e.re.toPrecision(6);
  if (e.im === 0) return re;
  return `${re} ${e.im < 0 ? '−' : '+'} ${Math.abs(e.im).toPrecision(6)}i`;
}

function bounds(c: Checker, o: Obj, key: string, dim: number): Bounds {
  if (o.lower === undefined && o.upper === undefined) c.fail(key, 'expected at least one of lower, upper');
  const side = (s: 'lower' | 'upper'): (number | null)[] => {
    if (o[s] === undefined) return new Array<null>(dim).fill(null);
    return c.array(o[s], join(key, s), dim).map((x, i) => (x === null ? null : c.number(x, `${key}.${s}[${i}]`)));
  };
  const lower = side('lower');
  const upper = side('upper');
  for (let i = 0; i < dim; i++) {
    const lo = lower[i];
    const up = upper[i];
    if (lo !== null && up !== null && lo > up) c.fail(`${key}.lower[${i}]`, `lower bound ${lo} exceeds upper bound ${up}`);
  }
  return { lower, upper };
}

function names(c: Checker, v: unknown, k: (typeof NAME_KEYS)[number], dim: number, fallback: string[]): string[] {
  if (v === undefined) return fallback;
  const o = c.object(v, 'names', NAME_KEYS);
  if (o[k] === undefined) return fallback;
  return nameList(c, o[k], `names.${k}`, dim);
}

function nameList(c: Checker, v: unknown, key: string, dim: number): string[] {
  const list = c.array(v, key, dim).map((s, i) => {
    const str = c.string(s, `${key}[${i}]`);
    if (!NAME_PATTERN.test(str)) c.fail(`${key}[${i}]`, `name must be an identifier (letters, digits, _; not starting with a digit), got ${JSON.stringify(str)}`);
    return str;
  });
  const seen = new Set<string>();
  list.forEach((s, i) => {
    if (seen.has(s)) c.fail(`${key}[${i}]`, `duplicate name ${JSON.stringify(s)}`);
    seen.add(s);
  });
  return list;
}
