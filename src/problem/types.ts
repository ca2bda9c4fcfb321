export interface Bounds {
  lower: (number | null)[];
  upper: (number | null)[];
}

export type TerminalKind = 'riccati' | 'stage' | 'none' | 'lyapunovGain' | 'matrix';

/** The validated MPC problem: discrete-time model, weights, limits and the parameter box. */
export interface MpcModel {
  /** problem `name`, else the file base name without extension */
  name: string;
  n: number;
  m: number;
  p: number;
  /** discrete-time (zero-order-hold discretised when the file gives a continuous model) */
  A: number[][];
  B: number[][];
  C: number[][];
  sampleTime: number | null;
  N: number;
  Nu: number;
  /** stage state weight; Q = CᵀQyC when the file gives weights.output */
  Q: number[][];
  R: number[][];
  S: number[][] | null;
  /** terminal weight */
  P: number[][];
  terminal: TerminalKind;
  /** K (m×n), u = −Kx, from the DARE of (A, B, Q, R) whenever it has a stabilising solution; null otherwise */
  lqrGain: number[][] | null;
  constraints: { input?: Bounds; inputRate?: Bounds; state?: Bounds; output?: Bounds };
  box: { lower: number[]; upper: number[] };
  /** θ includes u_prev (weights.inputRate or constraints.inputRate present) */
  hasRate: boolean;
  thetaNames: string[];
  inputNames: string[];
  stateNames: string[];
  outputNames: string[];
}

export interface LoadedProblem {
  file: string;
  raw: unknown;
  model: MpcModel;
}
