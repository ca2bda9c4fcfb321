import type { MpcModel } from '../problem/types.js';
import type { Layout, ThetaBlock, ZBlock } from './layout.js';

/** Where each block of an MPC formulation sits in θ and z. */
export interface MpcIndex {
  layout: Layout;
  nz: number;
  ntheta: number;
  /** θ offsets of the blocks (−1 when absent) */
  theta: { state: number; inputPrev: number; reference: number; disturbance: number };
  /** z index of the slack of state/output component i, or −1 when it has none */
  stateSlack: number[];
  outputSlack: number[];
}

const range = (k: number) => Array.from({ length: k }, (_, i) => i);

/** Components of a soft kind that get a slack: those with at least one finite bound. */
function slackComponents(bounds: { lower: (number | null)[]; upper: (number | null)[] } | undefined, soft: unknown): number[] {
  if (!bounds || !soft) return [];
  return range(bounds.lower.length).filter((i) => bounds.lower[i] !== null || bounds.upper[i] !== null);
}

/**
 * The layout of an MPC formulation (contract order): θ = [x(0); u_prev; r; d], each block only
 * when its feature is used; z = [u(0) … u(Nu−1); state slacks; output slacks].
 */
export function mpcIndex(model: MpcModel): MpcIndex {
  const { n, m, Nu } = model;
  const theta: ThetaBlock[] = [];
  let off = 0;
  const push = (kind: ThetaBlock['kind'], size: number, refersTo: number[]): number => {
    if (size === 0) return -1;
    theta.push({ kind, offset: off, size, names: model.thetaNames.slice(off, off + size), refersTo });
    off += size;
    return off - size;
  };
  const tOff = {
    state: push('state', n, range(n)),
    inputPrev: push('inputPrev', model.hasRate ? m : 0, range(m)),
    reference: push('reference', model.tracking?.outputs.length ?? 0, model.tracking?.outputs.slice() ?? []),
    disturbance: push('disturbance', model.nd, range(model.nd)),
  };
  const nMoves = Nu * m;
  const z: ZBlock[] = [{ kind: 'moves', offset: 0, size: nMoves, names: range(nMoves).map((i) => `${model.inputNames[i % m]}(${Math.floor(i / m)})`), refersTo: range(nMoves) }];
  let zOff = nMoves;
  const slackBlock = (kind: 'stateSlack' | 'outputSlack', comps: number[], names: string[], dim: number): number[] => {
    const at = new Array<number>(dim).fill(-1);
    if (comps.length === 0) return at;
    comps.forEach((i, j) => (at[i] = zOff + j));
    z.push({ kind, offset: zOff, size: comps.length, names: comps.map((i) => `${names[i]}_slack`), refersTo: comps });
    zOff += comps.length;
    return at;
  };
  const stateSlack = slackBlock('stateSlack', slackComponents(model.constraints.state, model.soft.state), model.stateNames, n);
  const outputSlack = slackBlock('outputSlack', slackComponents(model.constraints.output, model.soft.output), model.outputNames, model.p);
  const features: string[] = [];
  if (model.hasRate) features.push('inputRate');
  if (model.nd > 0) features.push('disturbance');
  if (model.soft.state) features.push('softState');
  if (model.soft.output) features.push('softOutput');
  if (model.terminalSet) features.push('terminalSet');
  const layout: Layout = {
    formulation: model.tracking ? 'tracking' : 'regulation',
    features,
    theta,
    z,
    lawSize: m,
    lawNames: [...model.inputNames],
  };
  if (model.terminalSet) layout.terminalSet = { rows: model.terminalSet.h.length, index: model.terminalSet.index };
  return { layout, nz: zOff, ntheta: off, theta: tOff, stateSlack, outputSlack };
}
