import { parseDocument } from 'yaml';
import { InputError } from '../io/input-error.js';
import { tol } from '../tol.js';
import { Checker, join, type Obj } from './check.js';
import { eye, mul, spectralRadius, transpose, unstabilisableMode, add, type Mat } from './dense.js';
import { solveDare, solveLyapunovGain } from './riccati.js';
import type { Bounds, LoadedProblem, MpcModel, TerminalKind } from './types.js';
import { discretiseZoh } from './zoh.js';

const TOP_KEYS = ['name', 'description', 'plant', 'horizon', 'controlHorizon', 'weights', 'constraints', 'parameters', 'names'] as const;
const PLANT_KEYS = ['A', 'B', 'C', 'timeDomain', 'sampleTime'] as const;
const WEIGHT_KEYS = ['state', 'output', 'input', 'inputRate', 'terminal'] as const;
const CONSTRAINT_KEYS = ['input', 'inputRate', 'state', 'output'] as const;
const BOUND_KEYS = ['lower', 'upper'] as const;
const NAME_KEYS = ['states', 'inputs', 'outputs'] as const;
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
  const doc = parseDocument(text, { prettyErrors: true });
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

  // ---- structure, types, dimensions (nothing computed yet) ----
  const plant = c.object(c.require(top, '', 'plant', 'the plant model {A, B}'), 'plant', PLANT_KEYS);
  c.require(top, '', 'horizon', 'prediction horizon N ≥ 1');
  const weights = c.object(c.require(top, '', 'weights', 'stage weights {state|output, input}'), 'weights', WEIGHT_KEYS);
  const params = c.object(c.require(top, '', 'parameters', 'the parameter box {lower, upper}'), 'parameters', BOUND_KEYS);

  let name = fileStem(file);
  if (top.name !== undefined) {
    name = c.string(top.name, 'name');
    if (name.trim() === '') c.fail('name', 'expected a non-empty string');
  }
  if (top.description !== undefined) c.string(top.description, 'description');

  const A0 = c.matrix(c.require(plant, 'plant', 'A', 'n×n state matrix'), 'plant.A');
  const n = A0.length;
  if (A0[0].length !== n) c.fail('plant.A', `expected a square matrix, got ${n}×${A0[0].length}`);
  const B0 = c.matrix(c.require(plant, 'plant', 'B', 'n×m input matrix'), 'plant.B', n, undefined, 'n rows as plant.A');
  const m = B0[0].length;
  const C = plant.C === undefined ? eye(n) : c.matrix(plant.C, 'plant.C', undefined, n, 'n columns as plant.A');
  const p = C.length;

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
  if (top.constraints !== undefined) {
    const co = c.object(top.constraints, 'constraints', CONSTRAINT_KEYS);
    for (const kind of CONSTRAINT_KEYS) {
      if (co[kind] === undefined) continue;
      constraints[kind] = bounds(c, co[kind], `constraints.${kind}`, dims[kind]);
    }
  }
  const hasRate = S !== null || constraints.inputRate !== undefined;
  const ntheta = n + (hasRate ? m : 0);

  const stateNames = names(c, top.names, 'states', n, defaultNames('x', n));
  const inputNames = names(c, top.names, 'inputs', m, defaultNames('u', m));
  const outputNames = names(c, top.names, 'outputs', p, defaultNames('y', p));
  const thetaNames = [...stateNames, ...(hasRate ? inputNames.map((s) => `${s}_prev`) : [])];
  const clash = thetaNames.findIndex((s, i) => thetaNames.indexOf(s) !== i);
  if (clash >= 0) c.fail(`names.states[${thetaNames.indexOf(thetaNames[clash])}]`, `state name ${JSON.stringify(thetaNames[clash])} clashes with the previous-input parameter of the same name`);

  const what = `dim θ = ${ntheta}: ${thetaNames.join(', ')}`;
  const lower = c.array(c.require(params, 'parameters', 'lower', 'lower corner of the θ box'), 'parameters.lower', ntheta, what).map((v, i) => c.number(v, `parameters.lower[${i}]`));
  const upper = c.array(c.require(params, 'parameters', 'upper', 'upper corner of the θ box'), 'parameters.upper', ntheta, what).map((v, i) => c.number(v, `parameters.upper[${i}]`));
  for (let i = 0; i < ntheta; i++)
    if (!(lower[i] < upper[i]))
      c.fail(`parameters.lower[${i}]`, `box must have lower < upper in every slot, got lower ${lower[i]} ≥ upper ${upper[i]} (${thetaNames[i]})`);

  // ---- model building and system-theoretic checks ----
  const { A, B } = timeDomain === 'continuous' ? discretiseZoh(A0, B0, sampleTime as number) : { A: A0, B: B0 };
  if (![...A, ...B].every((r) => r.every(Number.isFinite)))
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

  const model: MpcModel = {
    name,
    n,
    m,
    p,
    A,
    B,
    C,
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
    box: { lower, upper },
    hasRate,
    thetaNames,
    inputNames,
    stateNames,
    outputNames,
  };
  return { file, raw, model };
}

function fmtEig(e: { re: number; im: number }): string {
  const re = e.re.toPrecision(6);
  if (e.im === 0) return re;
  return `${re} ${e.im < 0 ? '−' : '+'} ${Math.abs(e.im).toPrecision(6)}i`;
}

function bounds(c: Checker, v: unknown, key: string, dim: number): Bounds {
  const o: Obj = c.object(v, key, BOUND_KEYS);
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

function names(c: Checker, v: unknown, k: 'states' | 'inputs' | 'outputs', dim: number, fallback: string[]): string[] {
  if (v === undefined) return fallback;
  const o = c.object(v, 'names', NAME_KEYS);
  if (o[k] === undefined) return fallback;
  const key = `names.${k}`;
  const list = c.array(o[k], key, dim).map((s, i) => {
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
