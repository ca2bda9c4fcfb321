/**
 * Small problems of our own (invented numbers) for the CLI tests, written into a test's temp dir.
 * Motor speed loop: θ = [omega, current], one input `volt` limited to ±1.
 */
export function motorProblem(edit?: (p: Record<string, any>) => void): Record<string, any> {
  const p: Record<string, any> = {
    name: 'motor-speed',
    plant: { A: [[0.98, 0.09], [-0.12, 0.7]], B: [[0.004], [0.3]], timeDomain: 'discrete', sampleTime: 0.01 },
    horizon: 8,
    weights: { state: [[5, 0], [0, 0.1]], input: [[0.02]] },
    constraints: { input: { lower: [-1], upper: [1] }, state: { lower: [null, -0.8], upper: [null, 0.8] } },
    parameters: { lower: [-3, -1], upper: [3, 1] },
    names: { states: ['omega', 'current'], inputs: ['volt'] },
  };
  edit?.(p);
  return p;
}

/** The same loop over a wide box with speed limits: two thirds of the box infeasible, thin regions at its border. */
export function motorWideProblem(): Record<string, any> {
  return motorProblem((p) => {
    p.parameters = { lower: [-12, -2], upper: [12, 2] };
    p.constraints.state = { lower: [-8, -0.8], upper: [8, 0.8] };
  });
}

/** A box where every speed is above its limit after one step whatever the input: empty feasible set. */
export function motorEmptyProblem(): Record<string, any> {
  return motorProblem((p) => {
    p.parameters = { lower: [2, 0.5], upper: [3, 1] };
    p.constraints.state = { lower: [-1, -0.8], upper: [1, 0.8] };
  });
}
