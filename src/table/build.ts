import { sha256Hex } from '../util/sha256.js';
import type { LoadedProblem } from '../problem/types.js';
import type { MpqpProblem, Partition } from '../mpqp/types.js';
import { tol } from '../tol.js';
import type { Layout } from '../formulation/layout.js';
import { TABLE_FORMAT, TABLE_VERSION, type TableFile } from './format.js';

/** JSON with object keys sorted at every level: the canonical form that is hashed. */
export function canonicalJson(value: unknown): string {
  if (Array.isArray(value)) return `[${value.map(canonicalJson).join(',')}]`;
  if (value && typeof value === 'object') {
    const o = value as Record<string, unknown>;
    return `{${Object.keys(o)
      .sort()
      .filter((k) => o[k] !== undefined)
      .map((k) => `${JSON.stringify(k)}:${canonicalJson(o[k])}`)
      .join(',')}}`;
  }
  return JSON.stringify(value);
}

/** "sha256:<hex>" of the canonical JSON (keys sorted) of a problem document: what a table records as `problemHash`. */
export function problemHash(raw: unknown): string {
  return `sha256:${sha256Hex(canonicalJson(raw))}`;
}

/** Assemble the table file from the problem as read, its mpQP and the computed partition. */
export function makeTable(loaded: LoadedProblem, mpqp: MpqpProblem, partition: Partition): TableFile {
  const { model } = loaded;
  const input = model.constraints.input;
  const m = model.m;
  return {
    format: TABLE_FORMAT,
    version: TABLE_VERSION,
    name: model.name,
    problem: loaded.raw,
    problemHash: problemHash(loaded.raw),
    layout: regulatorLayout(loaded, mpqp),
    thetaNames: [...mpqp.thetaNames],
    inputNames: [...mpqp.inputNames],
    box: { lower: Array.from(mpqp.box.lower), upper: Array.from(mpqp.box.upper) },
    inputLimits: {
      lower: input ? [...input.lower] : new Array<null>(m).fill(null),
      upper: input ? [...input.upper] : new Array<null>(m).fill(null),
    },
    constraints: [...mpqp.labels],
    dims: { ntheta: mpqp.ntheta, nu: mpqp.nu, nz: mpqp.nz, nc: mpqp.nc },
    tolerances: { ...tol },
    regions: partition.regions,
    stats: { ...partition.stats },
  };
}

/** θ = [x(0); u_prev], z = the free moves: the layout of the regulator formulation. */
function regulatorLayout(loaded: LoadedProblem, mpqp: MpqpProblem): Layout {
  const { model } = loaded;
  const range = (k: number) => Array.from({ length: k }, (_, i) => i);
  const theta: Layout['theta'] = [{ kind: 'state', offset: 0, size: model.n, names: mpqp.thetaNames.slice(0, model.n), refersTo: range(model.n) }];
  if (model.hasRate) theta.push({ kind: 'inputPrev', offset: model.n, size: model.m, names: mpqp.thetaNames.slice(model.n), refersTo: range(model.m) });
  const moveNames = range(mpqp.nz).map((i) => `${model.inputNames[i % model.m]}(${Math.floor(i / model.m)})`);
  return {
    formulation: 'regulation',
    features: model.hasRate ? ['inputRate'] : [],
    theta,
    z: [{ kind: 'moves', offset: 0, size: mpqp.nz, names: moveNames, refersTo: range(mpqp.nz) }],
    lawSize: model.m,
    lawNames: [...model.inputNames],
  };
}
