/**
 * A catalogue of bad problem files shared by the library-level and CLI-level tests. Each case
 * names the key path and a pattern of the reason that the one-line error must carry.
 */
export interface BadCase {
  title: string;
  /** file extension of the case file */
  ext: '.json' | '.yaml';
  /** file contents */
  text: string;
  key: string;
  reason: RegExp;
}

/** A valid base problem: 2 states, 1 input, rate weight so θ = [x1, x2, u1_prev]. */
export function baseProblem(): Record<string, any> {
  return {
    name: 'bad-input-base',
    plant: { A: [[1, 0.2], [0, 0.9]], B: [[0.02], [0.2]] },
    horizon: 4,
    weights: { state: [[2, 0], [0, 0.5]], input: [[0.3]], inputRate: [[0.05]] },
    constraints: { input: { lower: [-2], upper: [2] } },
    parameters: { lower: [-4, -4, -2], upper: [4, 4, 2] },
  };
}

function json(edit: (p: Record<string, any>) => void): string {
  const p = baseProblem();
  edit(p);
  return JSON.stringify(p, null, 2);
}

export const coreBadCases: BadCase[] = [
  { title: 'misspelt top-level key', ext: '.json', text: json((p) => { p.horizn = p.horizon; delete p.horizon; }), key: 'horizn', reason: /unknown key "horizn"; did you mean "horizon"\?/ },
  { title: 'misspelt constraint kind', ext: '.json', text: json((p) => { p.constraints.inputs = p.constraints.input; delete p.constraints.input; }), key: 'constraints.inputs', reason: /did you mean "input"\?/ },
  { title: 'missing plant', ext: '.json', text: json((p) => { delete p.plant; }), key: 'plant', reason: /missing required key/ },
  { title: 'missing horizon', ext: '.json', text: json((p) => { delete p.horizon; }), key: 'horizon', reason: /missing required key/ },
  { title: 'missing parameter box', ext: '.json', text: json((p) => { delete p.parameters; }), key: 'parameters', reason: /missing required key/ },
  { title: 'A not square', ext: '.json', text: json((p) => { p.plant.A = [[1, 0.2, 0], [0, 0.9, 0]]; }), key: 'plant.A', reason: /square matrix, got 2×3/ },
  { title: 'B has wrong row count', ext: '.json', text: json((p) => { p.plant.B = [[0.02]]; }), key: 'plant.B', reason: /expected 2 rows/ },
  { title: 'ragged A', ext: '.json', text: json((p) => { p.plant.A = [[1, 0.2], [0]]; }), key: 'plant.A[1]', reason: /expected 2 columns/ },
  { title: 'string entry in A', ext: '.json', text: json((p) => { p.plant.A[1][0] = 'zero'; }), key: 'plant.A[1][0]', reason: /expected a number, got the string "zero"/ },
  { title: 'infinite entry in B (YAML .inf)', ext: '.yaml', text: 'plant:\n  A: [[1, 0.2], [0, 0.9]]\n  B: [[.inf], [0.2]]\nhorizon: 3\nweights:\n  state: [[1, 0], [0, 1]]\n  input: [[1]]\nparameters:\n  lower: [-1, -1]\n  upper: [1, 1]\n', key: 'plant.B[0][0]', reason: /expected a finite number, got Infinity/ },
  { title: 'C has wrong column count', ext: '.json', text: json((p) => { p.plant.C = [[1, 0, 0]]; }), key: 'plant.C[0]', reason: /expected 2 columns/ },
  { title: 'continuous without sample time', ext: '.json', text: json((p) => { p.plant.timeDomain = 'continuous'; }), key: 'plant.sampleTime', reason: /continuous-time plant needs sampleTime > 0/ },
  { title: 'negative sample time', ext: '.json', text: json((p) => { p.plant.sampleTime = -0.1; }), key: 'plant.sampleTime', reason: /must be > 0/ },
  { title: 'unknown time domain', ext: '.json', text: json((p) => { p.plant.timeDomain = 'analog'; }), key: 'plant.timeDomain', reason: /expected "discrete" or "continuous"/ },
  { title: 'zero horizon', ext: '.json', text: json((p) => { p.horizon = 0; }), key: 'horizon', reason: /value ≥ 1, got 0/ },
  { title: 'fractional horizon', ext: '.json', text: json((p) => { p.horizon = 2.5; }), key: 'horizon', reason: /expected an integer/ },
  { title: 'control horizon beyond horizon', ext: '.json', text: json((p) => { p.controlHorizon = 5; }), key: 'controlHorizon', reason: /1 ≤ value ≤ 4, got 5/ },
  { title: 'both state and output weights', ext: '.json', text: json((p) => { p.weights.output = [[1, 0], [0, 1]]; }), key: 'weights.output', reason: /exactly one of weights.state and weights.output/ },
  { title: 'neither state nor output weight', ext: '.json', text: json((p) => { delete p.weights.state; }), key: 'weights.state', reason: /exactly one of weights.state/ },
  { title: 'state weight not symmetric', ext: '.json', text: json((p) => { p.weights.state = [[2, 0.5], [0, 0.5]]; }), key: 'weights.state[0][1]', reason: /not symmetric.*tol\.symmetry/ },
  { title: 'state weight not PSD', ext: '.json', text: json((p) => { p.weights.state = [[1, 2], [2, 1]]; }), key: 'weights.state', reason: /not positive semidefinite: smallest eigenvalue -1\.0+ < −tol\.psd/ },
  { title: 'input weight zero (not PD)', ext: '.json', text: json((p) => { p.weights.input = [[0]]; }), key: 'weights.input', reason: /not positive definite.*tol\.pd/ },
  { title: 'rate weight wrong size', ext: '.json', text: json((p) => { p.weights.inputRate = [[1, 0], [0, 1]]; }), key: 'weights.inputRate', reason: /expected 1 rows/ },
  { title: 'misspelt terminal word', ext: '.json', text: json((p) => { p.weights.terminal = 'ricatti'; }), key: 'weights.terminal', reason: /expected "riccati", "stage", "none"/ },
  { title: 'terminal matrix not PSD', ext: '.json', text: json((p) => { p.weights.terminal = [[1, 0], [0, -3]]; }), key: 'weights.terminal', reason: /not positive semidefinite: smallest eigenvalue -3/ },
  { title: 'riccati terminal on an unstabilisable plant', ext: '.json', text: json((p) => { p.plant.A = [[1.2, 0], [0, 0.5]]; p.plant.B = [[0], [1]]; }), key: 'weights.terminal', reason: /not stabilisable: the mode λ = 1\.2\d* .*uncontrollable \(PBH test/ },
  { title: 'lyapunov gain that does not stabilise', ext: '.json', text: json((p) => { p.weights.terminal = { lyapunovGain: [[-1, 0]] }; }), key: 'weights.terminal.lyapunovGain', reason: /A − BK is not stable: spectral radius 1\.\d+/ },
  { title: 'input lower above upper', ext: '.json', text: json((p) => { p.constraints.input = { lower: [3], upper: [2] }; }), key: 'constraints.input.lower[0]', reason: /lower bound 3 exceeds upper bound 2/ },
  { title: 'state bound of wrong length', ext: '.json', text: json((p) => { p.constraints.state = { upper: [1] }; }), key: 'constraints.state.upper', reason: /expected 2 entries, got 1/ },
  { title: 'unknown key inside bounds', ext: '.json', text: json((p) => { p.constraints.input = { lower: [-1], uper: [1] }; }), key: 'constraints.input.uper', reason: /did you mean "upper"\?/ },
  { title: 'box misses the u_prev slot', ext: '.json', text: json((p) => { p.parameters = { lower: [-4, -4], upper: [4, 4] }; }), key: 'parameters.lower', reason: /expected 3 entries \(dim θ = 3: x1, x2, u1_prev\), got 2/ },
  { title: 'unbounded box slot', ext: '.json', text: json((p) => { p.parameters.upper[1] = null; }), key: 'parameters.upper[1]', reason: /expected a number, got null/ },
  { title: 'empty box slot', ext: '.json', text: json((p) => { p.parameters.lower[2] = 2; }), key: 'parameters.lower[2]', reason: /lower < upper.*u1_prev/ },
  { title: 'input name not an identifier', ext: '.json', text: json((p) => { p.names = { inputs: ['duty cycle'] }; }), key: 'names.inputs[0]', reason: /must be an identifier/ },
  { title: 'state name clashes with a u_prev parameter', ext: '.json', text: json((p) => { p.names = { states: ['pos', 'u1_prev'] }; }), key: 'names.states[1]', reason: /clashes with the previous-input parameter/ },
  { title: 'duplicate input names', ext: '.json', text: json((p) => { p.plant.B = [[0.02, 0], [0.2, 0.1]]; p.weights.input = [[1, 0], [0, 1]]; p.weights.inputRate = [[0.1, 0], [0, 0.1]]; p.constraints.input = { upper: [1, 1] }; p.parameters = { lower: [-1, -1, -1, -1], upper: [1, 1, 1, 1] }; p.names = { inputs: ['u', 'u'] }; }), key: 'names.inputs[1]', reason: /duplicate name "u"/ },
  { title: 'duplicate top-level key (JSON keeps the last one silently)', ext: '.json', text: json((p) => { p.horizon = 4; }).replace('"horizon": 4,', '"horizon": 4,\n  "horizon": 3,'), key: 'horizon', reason: /^key given twice \(again at line 24 column 3\); remove one$/ },
  { title: 'duplicate nested key', ext: '.json', text: json((p) => { p.weights.input = [[0.3]]; }).replace('"input": [', '"input": [[9]], "input": ['), key: 'weights.input', reason: /^key given twice \(again at line \d+ column \d+\); remove one$/ },
  { title: 'duplicate key inside a list item (YAML)', ext: '.yaml', text: 'plant:\n  A: [[1, 0.2], [0, 0.9]]\n  B: [[0.02], [0.2]]\nhorizon: 3\nweights:\n  state: [[1, 0], [0, 1]]\n  input: [[1]]\nconstraints:\n  input: { lower: [-1], upper: [1], upper: [2] }\nparameters:\n  lower: [-1, -1]\n  upper: [1, 1]\n', key: 'constraints.input.upper', reason: /^key given twice \(again at line 9 column 37\); remove one$/ },
  { title: 'top level is an array', ext: '.json', text: '[1, 2, 3]', key: '(top level)', reason: /expected an object, got an array of length 3/ },
  { title: 'unparsable JSON', ext: '.json', text: '{\n  "horizon": 3,\n  "plant": }\n', key: '(file)', reason: /invalid JSON at line 3 column 12: unexpected token '}'/ },
  { title: 'unparsable YAML', ext: '.yaml', text: 'horizon: 3\nplant:\n  A: [[1, 0.2], [0, 0.9]\nweights: {}\n', key: '(file)', reason: /invalid YAML at line \d+ column \d+/ },
];

/** A valid direct mpQP file (2 decisions, 2 parameters). */
export function baseMpqp(): Record<string, any> {
  return {
    name: 'bad-input-mpqp',
    mpqp: { H: [[2, 0.5], [0.5, 1]], F: [[1, 0], [0, 1]], G: [[1, 0], [-1, 0]], w: [1, 1], E: [[0, 0], [0, 0]], outputs: 1 },
    parameters: { lower: [-2, -2], upper: [2, 2] },
  };
}

function mpqpJson(edit: (p: Record<string, any>) => void): string {
  const p = baseMpqp();
  edit(p);
  return JSON.stringify(p, null, 2);
}

/** A slowly turning, barely contracting plant: its invariant set needs far more than 200 steps. */
const slowRotation = (p: Record<string, any>) => {
  const a = 0.004;
  const r = 0.99999;
  p.plant = { A: [[r * Math.cos(a), -r * Math.sin(a)], [r * Math.sin(a), r * Math.cos(a)]], B: [[0], [0.001]] };
  p.weights = { state: [[1e-6, 0], [0, 1e-6]], input: [[1e6]] };
  p.constraints = { state: { lower: [-1, null], upper: [1, null] }, terminal: 'invariant' };
  p.parameters = { lower: [-1, -1], upper: [1, 1] };
};

export const formulationBadCases: BadCase[] = [
  { title: 'more tracked outputs than inputs', ext: '.json', text: json((p) => { p.tracking = {}; p.parameters = { lower: [-4, -4, -2, -1, -1], upper: [4, 4, 2, 1, 1] }; }), key: 'tracking', reason: /2 tracked outputs exceed the 1 input: some references have no steady state/ },
  { title: 'rank-deficient target system', ext: '.json', text: json((p) => { p.plant.A = [[1, 0.2], [0, 1]]; p.plant.B = [[0], [0.2]]; p.plant.C = [[0, 1]]; p.tracking = { outputs: [0] }; p.parameters = { lower: [-4, -4, -2, -1], upper: [4, 4, 2, 1] }; }), key: 'tracking.outputs', reason: /has rank 2 < n \+ p_t = 3: some references have no steady state/ },
  { title: 'tracked output index out of range', ext: '.json', text: json((p) => { p.tracking = { outputs: [2] }; }), key: 'tracking.outputs[0]', reason: /output index \(0-based, p = 2\) must satisfy 0 ≤ value ≤ 1, got 2/ },
  { title: 'tracked output listed twice', ext: '.json', text: json((p) => { p.plant.C = [[1, 0]]; p.tracking = { outputs: [0, 0] }; }), key: 'tracking.outputs[1]', reason: /output 0 is listed twice/ },
  { title: 'box misses the reference slot', ext: '.json', text: json((p) => { p.plant.C = [[1, 0]]; p.tracking = {}; }), key: 'parameters.lower', reason: /expected 4 entries \(dim θ = 4: x1, x2, u1_prev, y1_ref\), got 3/ },
  { title: 'box misses the disturbance slot', ext: '.json', text: json((p) => { p.plant.Bd = [[0.1], [0]]; }), key: 'parameters.lower', reason: /expected 4 entries \(dim θ = 4: x1, x2, u1_prev, d1\), got 3/ },
  { title: 'Bd with the wrong row count', ext: '.json', text: json((p) => { p.plant.Bd = [[0.1]]; }), key: 'plant.Bd', reason: /expected 2 rows/ },
  { title: 'Cd columns differ from Bd columns', ext: '.json', text: json((p) => { p.plant.Bd = [[0.1], [0]]; p.plant.Cd = [[1, 0], [0, 1]]; }), key: 'plant.Cd[0]', reason: /expected 1 columns/ },
  { title: 'terminal set with tracking', ext: '.json', text: json((p) => { p.plant.C = [[1, 0]]; p.tracking = {}; p.constraints.terminal = 'invariant'; p.parameters = { lower: [-4, -4, -2, -1], upper: [4, 4, 2, 1] }; }), key: 'constraints.terminal', reason: /cannot be combined with tracking/ },
  { title: 'terminal set with a disturbance', ext: '.json', text: json((p) => { p.plant.Bd = [[0.1], [0]]; p.constraints.terminal = 'invariant'; p.parameters = { lower: [-4, -4, -2, -1], upper: [4, 4, 2, 1] }; }), key: 'constraints.terminal', reason: /cannot be combined with a disturbance model/ },
  { title: 'terminal set with soft limits', ext: '.json', text: json((p) => { p.constraints.state = { lower: [-3, -3], upper: [3, 3], soft: { quadratic: 10 } }; p.constraints.terminal = 'invariant'; }), key: 'constraints.terminal', reason: /cannot be combined with soft limits/ },
  { title: 'terminal set not finitely determined in 200 steps', ext: '.json', text: json(slowRotation), key: 'constraints.terminal', reason: /not finitely determined within 200 steps/ },
  { title: 'terminal set word misspelt', ext: '.json', text: json((p) => { p.constraints.terminal = 'invariant-set'; }), key: 'constraints.terminal', reason: /expected "invariant"/ },
  { title: 'soft quadratic weight zero', ext: '.json', text: json((p) => { p.constraints.state = { lower: [-3, -3], upper: [3, 3], soft: { quadratic: 0 } }; }), key: 'constraints.state.soft.quadratic', reason: /must be > 0, got 0/ },
  { title: 'soft linear weight negative (per component)', ext: '.json', text: json((p) => { p.constraints.output = { upper: [3, 3], soft: { quadratic: [1, 1], linear: [0, -2] } }; }), key: 'constraints.output.soft.linear[1]', reason: /must be ≥ 0, got -2/ },
  { title: 'soft weights of the wrong length', ext: '.json', text: json((p) => { p.constraints.state = { upper: [3, 3], soft: { quadratic: [1, 1, 1] } }; }), key: 'constraints.state.soft.quadratic', reason: /expected 2 entries/ },
  { title: 'soft input limits', ext: '.json', text: json((p) => { p.constraints.input.soft = { quadratic: 1 }; }), key: 'constraints.input.soft', reason: /unknown key "soft"/ },
  { title: 'soft maxViolation zero', ext: '.json', text: json((p) => { p.constraints.state = { upper: [3, 3], soft: { quadratic: 1, maxViolation: 0 } }; }), key: 'constraints.state.soft.maxViolation', reason: /must be > 0, got 0/ },
  { title: 'mpqp together with MPC keys', ext: '.json', text: mpqpJson((p) => { p.horizon = 3; }), key: 'horizon', reason: /cannot be combined with "mpqp"/ },
  { title: 'mpqp H not positive definite', ext: '.json', text: mpqpJson((p) => { p.mpqp.H = [[1, 2], [2, 1]]; }), key: 'mpqp.H', reason: /not positive definite/ },
  { title: 'mpqp F rows differ from H', ext: '.json', text: mpqpJson((p) => { p.mpqp.F = [[1, 0]]; }), key: 'mpqp.F', reason: /expected 2 rows/ },
  { title: 'mpqp E columns differ from F', ext: '.json', text: mpqpJson((p) => { p.mpqp.E = [[0], [0]]; }), key: 'mpqp.E[0]', reason: /expected 2 columns/ },
  { title: 'mpqp w length differs from G rows', ext: '.json', text: mpqpJson((p) => { p.mpqp.w = [1]; }), key: 'mpqp.w', reason: /expected 2 entries/ },
  { title: 'mpqp c of the wrong length', ext: '.json', text: mpqpJson((p) => { p.mpqp.c = [1, 2, 3]; }), key: 'mpqp.c', reason: /expected 2 entries/ },
  { title: 'mpqp G without w and E', ext: '.json', text: mpqpJson((p) => { delete p.mpqp.w; }), key: 'mpqp.w', reason: /come together/ },
  { title: 'mpqp outputs beyond n_z', ext: '.json', text: mpqpJson((p) => { p.mpqp.outputs = 3; }), key: 'mpqp.outputs', reason: /1 ≤ value ≤ 2, got 3/ },
  { title: 'mpqp box of the wrong length', ext: '.json', text: mpqpJson((p) => { p.parameters = { lower: [-1, -1, -1], upper: [1, 1, 1] }; }), key: 'parameters.lower', reason: /expected 2 entries \(dim θ = 2: columns of mpqp.F\), got 3/ },
];

export const badCases: BadCase[] = [...coreBadCases, ...formulationBadCases];
