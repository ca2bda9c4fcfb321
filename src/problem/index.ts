export type { Bounds, MpcModel, LoadedProblem, TerminalKind, SoftLimits, TerminalSet } from './types.js';
export { loadProblem, parseProblem } from './read.js';
export { discretiseZoh } from './zoh.js';
export { solveDare, solveLyapunovGain, dareResidual, lyapunovResidual } from './riccati.js';
