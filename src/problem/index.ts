export type { Bounds, MpcModel, LoadedProblem, TerminalKind } from './types.js';
export { loadProblem, parseProblem } from './read.js';
export { buildRawMpqp } from './condense.js';
export { discretiseZoh } from './zoh.js';
export { solveDare, solveLyapunovGain, dareResidual, lyapunovResidual } from './riccati.js';
