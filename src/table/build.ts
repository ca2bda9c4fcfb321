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

/**
 * Assemble the table file from the problem as read, its formulation (mpQP and layout) and the
 * computed partition (give it in canonical form, `joinPartitions`, for bytes independent of the
 * run). A lean table (`options.lean`, regions solved with `SolveOptions.lean`) says so.
 */
export function makeTable(loaded: LoadedProblem, formulation: { mpqp: MpqpProblem; layout: Layout }, partition: Partition, options: { lean?: boolean } = {}): TableFile {
  const { mpqp, layout } = formulation;
  const input = loaded.model?.constraints.input;
  const k = mpqp.lawSize;
  return {
    format: TABLE_FORMAT,
    version: TABLE_VERSION,
    lean: !!options.lean,
    name: loaded.name,
    problem: loaded.raw,
    problemHash: problemHash(loaded.raw),
    layout,
    thetaNames: [...mpqp.thetaNames],
    inputNames: [...mpqp.lawNames],
    box: { lower: Array.from(mpqp.box.lower), upper: Array.from(mpqp.box.upper) },
    inputLimits: {
      lower: input ? [...input.lower] : new Array<null>(k).fill(null),
      upper: input ? [...input.upper] : new Array<null>(k).fill(null),
    },
    constraints: [...mpqp.labels],
    dims: { ntheta: mpqp.ntheta, nu: k, nz: mpqp.nz, nc: mpqp.nc },
    tolerances: { ...tol },
    regions: partition.regions,
    stats: { regions: partition.stats.regions, complete: partition.stats.complete, stopReason: partition.stats.stopReason, unresolvedPieces: partition.stats.unresolvedPieces },
  };
}
