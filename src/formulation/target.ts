import { mul, rank, solve, transpose, type Mat } from '../problem/dense.js';
import type { MpcModel } from '../problem/types.js';

/**
 * The steady-state target (x_s, u_s) as a linear map of (r, d): [x_s; u_s] = T [r; d].
 *
 * (x_s, u_s) is the minimum-norm solution of
 *   [A − I, B; C_t, 0] [x_s; u_s] = [−Bd d; r − Cd_t d]
 * (C_t, Cd_t: the tracked rows of C, Cd). With M of full row rank n + p_t the minimum-norm
 * solution is Mᵀ (M Mᵀ)⁻¹ rhs (common practice; Muske & Rawlings 1993 for the target problem).
 */
export interface TargetMap {
  /** n × (p_t + nd) */
  Tx: Mat;
  /** m × (p_t + nd) */
  Tu: Mat;
}

export type TargetFailure = { ok: false; reason: string };

/** The matrix M of the target system for the tracked outputs. */
function targetSystem(A: Mat, B: Mat, Ct: Mat): Mat {
  const m = B[0].length;
  const top = A.map((row, i) => [...row.map((a, j) => a - (i === j ? 1 : 0)), ...B[i]]);
  const bottom = Ct.map((row) => [...row, ...new Array<number>(m).fill(0)]);
  return [...top, ...bottom];
}

/**
 * T for the model's tracked outputs and disturbance, or the reason it does not exist
 * (more tracked outputs than inputs, or M without full row rank).
 */
export function targetMapOf(
  A: Mat,
  B: Mat,
  C: Mat,
  Bd: Mat | null,
  Cd: Mat | null,
  outputs: number[],
): { ok: true; map: TargetMap } | TargetFailure {
  const n = A.length;
  const m = B[0].length;
  const pt = outputs.length;
  const nd = Bd ? Bd[0].length : 0;
  if (pt > m) return { ok: false, reason: `${pt} tracked outputs exceed the ${m} input${m === 1 ? '' : 's'}: some references have no steady state` };
  const Ct = outputs.map((i) => C[i]);
  const M = targetSystem(A, B, Ct);
  const rk = rank(M);
  if (rk < n + pt)
    return {
      ok: false,
      reason: `the target system [A − I, B; C_t, 0] has rank ${rk} < n + p_t = ${n + pt}: some references have no steady state (e.g. a tracked output the inputs cannot hold, or an integrator direction)`,
    };
  // rhs = R [r; d] with R = [0, −Bd; I, −Cd_t]
  const R: Mat = [];
  for (let i = 0; i < n; i++) R.push([...new Array<number>(pt).fill(0), ...(Bd ? Bd[i].map((v) => -v) : [])]);
  for (let a = 0; a < pt; a++)
    R.push([...Array.from({ length: pt }, (_, b) => (a === b ? 1 : 0)), ...(Cd ? Cd[outputs[a]].map((v) => -v) : new Array<number>(nd).fill(0))]);
  const cols = pt + nd;
  if (cols === 0) return { ok: true, map: { Tx: A.map(() => []), Tu: B[0].map(() => []) } };
  // T = Mᵀ (M Mᵀ)⁻¹ R
  const Mt = transpose(M);
  const T = mul(Mt, solve(mul(M, Mt), R));
  return { ok: true, map: { Tx: T.slice(0, n), Tu: T.slice(n, n + m) } };
}

/** The target map of a validated model (which has passed the rank check when it tracks). */
export function targetMap(model: MpcModel): TargetMap {
  const res = targetMapOf(model.A, model.B, model.C, model.Bd, model.Cd, model.tracking?.outputs ?? []);
  if (!res.ok) throw new Error(res.reason);
  return res.map;
}

/**
 * Steady-state target for reference r (one entry per tracked output, in `tracking.outputs` order)
 * and disturbance d (nd entries). Without tracking the target is the origin (the regulation cost).
 */
export function steadyStateTarget(model: MpcModel, r: number[], d: number[]): { xs: number[]; us: number[] } {
  if (!model.tracking) return { xs: new Array<number>(model.n).fill(0), us: new Array<number>(model.m).fill(0) };
  const pt = model.tracking.outputs.length;
  if (r.length !== pt) throw new Error(`r has ${r.length} entries, the model tracks ${pt} outputs`);
  if (d.length !== model.nd) throw new Error(`d has ${d.length} entries, the model has ${model.nd} disturbances`);
  const { Tx, Tu } = targetMap(model);
  const rd = [...r, ...d];
  const apply = (T: Mat) => T.map((row) => row.reduce((s, a, j) => s + a * rd[j], 0));
  return { xs: apply(Tx), us: apply(Tu) };
}
