/**
 * The formulation layer: turns a loaded problem (an MPC problem or a directly given mpQP) into the
 * generic mpQP the engine solves, and describes its θ and z blocks (`Layout`).
 */
import { conditionMpqp } from '../mpqp/condition.js';
import type { MpqpProblem } from '../mpqp/types.js';
import type { LoadedProblem, MpcModel } from '../problem/types.js';
import { QpBuilder } from './builder.js';
import { addCost, addLimits, addSlacks, addTerminalSet, predict, targetTerms } from './layers.js';
import { plainLayout, type Layout } from './layout.js';
import { mpcIndex } from './mpc-layout.js';

export type { Layout, ThetaBlock, ZBlock, ThetaBlockKind, ZBlockKind, FormulationKind } from './layout.js';
export { thetaBlock, thetaNamesOf, plainLayout } from './layout.js';
export { steadyStateTarget, targetMap, targetMapOf, type TargetMap } from './target.js';
export { invariantSet, TERMINAL_MAX_STEPS } from './terminal.js';
export { mpcIndex, type MpcIndex } from './mpc-layout.js';

export interface Formulation {
  /** the conditioned mpQP: what the engine solves */
  mpqp: MpqpProblem;
  layout: Layout;
}

/**
 * The raw (unconditioned) mpQP of an MPC model: prediction (with the disturbance), cost around the
 * steady-state target (tracking), limits (soft where asked), slacks, terminal set — in that order.
 */
export function formulateMpc(model: MpcModel): { raw: MpqpProblem; layout: Layout } {
  const idx = mpcIndex(model);
  const b = new QpBuilder(idx.nz, idx.ntheta);
  const pred = predict(model, b, idx);
  addCost(model, b, pred, targetTerms(model, b, idx));
  addLimits(model, b, pred, idx);
  addSlacks(model, b, idx);
  addTerminalSet(model, b, pred);
  const raw = b.finish(model.box, model.thetaNames, model.m, model.inputNames);
  return { raw, layout: idx.layout };
}

/** The raw mpQP and layout of any loaded problem. */
export function formulateRaw(loaded: LoadedProblem): { raw: MpqpProblem; layout: Layout } {
  if (loaded.model) return formulateMpc(loaded.model);
  const d = loaded.direct;
  if (!d) throw new Error('a loaded problem holds either a model or a direct mpQP');
  return { raw: d, layout: plainLayout(d.thetaNames, d.lawNames, d.nz, loaded.decisionNames) };
}

/** The conditioned mpQP and its layout: what `tessera solve` explores and the table records. */
export function formulate(loaded: LoadedProblem): Formulation {
  const { raw, layout } = formulateRaw(loaded);
  return { mpqp: conditionMpqp(raw), layout };
}

/** The conditioned mpQP of a loaded problem. */
export function buildMpqp(loaded: LoadedProblem): MpqpProblem {
  return formulate(loaded).mpqp;
}

/** The raw (unconditioned) condensed mpQP of an MPC model. */
export function buildRawMpqp(model: MpcModel): MpqpProblem {
  return formulateMpc(model).raw;
}
