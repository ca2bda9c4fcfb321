export type { Bounds, MpcModel, LoadedProblem, TerminalKind, SoftLimits, TerminalSet } from './types.js';
export { parseProblem, parseProblemText } from './read.js';
export { loadProblem } from './load.js';
export { discretiseZoh } from './zoh.js';
export { solveDare, solveLyapunovGain, dareResidual, lyapunovResidual } from './riccati.js';
