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

export const badCases: BadCase[] = [
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
