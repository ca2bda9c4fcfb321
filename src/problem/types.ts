import type { MpqpProblem } from '../mpqp/types.js';

export interface Bounds {
  lower: (number | null)[];
  upper: (number | null)[];
}

export type TerminalKind = 'riccati' | 'stage' | 'none' | 'lyapunovGain' | 'matrix';

/** Soft state or output limits: one slack per component with a finite bound (see `slackOf`). */
export interface SoftLimits {
  /** q_i > 0 per component (n for states, p for outputs) */
  quadratic: number[];
  /** l_i ≥ 0 per component */
  linear: number[];
  /** v_i > 0 per component, null: no cap on the slack */
  maxViolation: (number | null)[];
}

/** The terminal invariant set {x : H x ≤ h} (rows of unit norm, redundant rows removed). */
export interface TerminalSet {
  H: number[][];
  h: number[];
  /** Gilbert–Tan determination index t*: O∞ = O_t* */
  index: number;
}

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
  /** number of disturbance entries in θ (0 without a disturbance model) */
  nd: number;
  /** n×nd, discrete-time (after zero-order hold for a continuous plant); null when nd = 0 */
  Bd: number[][] | null;
  /** p×nd; null when nd = 0 */
  Cd: number[][] | null;
  /** the outputs that follow a reference r (0-based, in the order of r); null without tracking */
  tracking: { outputs: number[] } | null;
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
  /** soft state/output limits (constraints.state.soft, constraints.output.soft) */
  soft: { state: SoftLimits | null; output: SoftLimits | null };
  /** x(N) ∈ maximal positively invariant set under u = −Kx (constraints.terminal = "invariant"); null otherwise */
  terminalSet: TerminalSet | null;
  box: { lower: number[]; upper: number[] };
  /** θ includes u_prev (weights.inputRate or constraints.inputRate present) */
  hasRate: boolean;
  thetaNames: string[];
  inputNames: string[];
  stateNames: string[];
  outputNames: string[];
  disturbanceNames: string[];
}

/**
 * A problem file as read: either an MPC problem (`model`) or a directly given mpQP (`direct`),
 * exactly one of the two non-null. `direct` is the raw (unconditioned) generic problem with its
 * box, θ names and law names; the formulation layer (src/formulation) conditions both kinds.
 */
export interface LoadedProblem {
  file: string;
  raw: unknown;
  /** problem `name`, else the file base name without extension */
  name: string;
  model: MpcModel | null;
  direct: MpqpProblem | null;
  /** with `direct`: the names of all n_z decision entries (the law takes the first lawSize) */
  decisionNames?: string[];
}
