/**
 * Part files and checkpoints: the two run-state files of `solve` (pure; the CLI reads and writes them).
 *
 * A part file holds what `solve --part i/k` found in the i-th of k sub-boxes (`subBox`): whole
 * regions (built over the full box) with a box holding each, and the exploration's counters.
 * `joinParts` puts k of them together into the table a single run writes, byte for byte
 * (`joinPartitions`: union by active set, canonical order, neighbours recomputed).
 *
 * A checkpoint holds an exploration's state (`ExplorationState`): the regions found and the active
 * sets whose facets are covered; `solve --resume` continues from it.
 */
import { InputError } from '../io/input-error.js';
import { joinPartitions, subBox } from '../mpqp/canonical.js';
import type { ExplorationState, Partition, PartitionStats } from '../mpqp/types.js';
import type { LoadedProblem } from '../problem/types.js';
import { parseProblem } from '../problem/read.js';
import { formulate } from '../formulation/index.js';
import { makeTable, problemHash } from './build.js';
import type { TableFile } from './format.js';

/** Tag of a part file (`solve --part`). */
export const PART_FORMAT = 'tessera-part';
/** Tag of a checkpoint (`solve --checkpoint`). */
export const CHECKPOINT_FORMAT = 'tessera-checkpoint';
/** Version of both run-state formats; bump on any change of meaning. */
export const RUN_STATE_VERSION = 1;

/**
 * Where the sub-boxes of a threaded exploration stand (stored in a checkpoint beside the union of
 * the regions): how many sub-boxes, which are finished, and per sub-box the active-set keys of the
 * regions whose facets are covered inside it.
 */
export interface SubBoxProgress {
  count: number;
  finished: number[];
  done: string[][];
  /** the sub-boxes themselves (the cut is chosen by a pilot, `splitBox`); absent in older files, whose sub-boxes were `subBox`'s */
  boxes?: { lower: number[]; upper: number[] }[];
}

/** Which of k sub-boxes (1-based i, as on the command line). */
export interface PartIndex {
  index: number;
  count: number;
}

/** The file `solve --part i/k` writes. */
export interface PartFile {
  format: typeof PART_FORMAT;
  version: number;
  name: string;
  problem: unknown;
  problemHash: string;
  part: PartIndex & { lower: number[]; upper: number[] };
  /** lean regions (`solve --lean`): no move sequence, no value function */
  lean: boolean;
  stats: PartitionStats;
  regions: Partition['regions'];
  boxes: { lo: number[]; hi: number[] }[];
}

/** The file `solve --checkpoint` writes and `solve --resume` reads. */
export interface CheckpointFile {
  format: typeof CHECKPOINT_FORMAT;
  version: number;
  problemHash: string;
  /** the sub-box explored (`--part`), or null for the whole box */
  part: PartIndex | null;
  /** lean regions (`solve --lean`) */
  lean: boolean;
  /** regions found, and the keys whose facets are covered over the whole box explored */
  state: ExplorationState;
  /**
   * where each sub-box of a run on several threads stands (the keys covered in each; `state.done`
   * holds those covered in every sub-box their region meets). Absent: one thread, or an older file.
   */
  subBoxes?: SubBoxProgress;
}

/** Parse "i/k" (1 ≤ i ≤ k, integers) as given to `--part`; InputError otherwise. */
export function parsePartIndex(text: string, flag = '--part'): PartIndex {
  const m = /^\s*(\d+)\s*\/\s*(\d+)\s*$/.exec(text);
  const index = m ? Number(m[1]) : NaN;
  const count = m ? Number(m[2]) : NaN;
  if (!m || !(count >= 1) || !(index >= 1) || index > count)
    throw new InputError('(command line)', flag, `expected i/k with 1 ≤ i ≤ k (the i-th of k sub-boxes), got "${text}"`);
  return { index, count };
}

/** The part file of an exploration of part `part` of `loaded` (regions and boxes shared, not copied). */
export function makePart(loaded: LoadedProblem, box: { lower: ArrayLike<number>; upper: ArrayLike<number> }, part: PartIndex, partition: Partition, lean = false): PartFile {
  const sub = subBox(box, part.index - 1, part.count);
  return {
    format: PART_FORMAT,
    version: RUN_STATE_VERSION,
    name: loaded.name,
    problem: loaded.raw,
    problemHash: problemHash(loaded.raw),
    part: { ...part, ...sub },
    lean,
    stats: partition.stats,
    regions: partition.regions,
    boxes: (partition.boxes ?? []).map((b) => ({ lo: Array.from(b.lo), hi: Array.from(b.hi) })),
  };
}

function parseJson(text: string, file: string): Record<string, unknown> {
  let raw: unknown;
  try {
    raw = JSON.parse(text);
  } catch (e) {
    throw new InputError(file, '', `not valid JSON (${(e as Error).message})`);
  }
  if (typeof raw !== 'object' || raw === null || Array.isArray(raw)) throw new InputError(file, '', 'must be a JSON object');
  return raw as Record<string, unknown>;
}

function checkHeader(t: Record<string, unknown>, file: string, format: string, what: string): void {
  if (t.format !== format) throw new InputError(file, 'format', `expected "${format}" (${what}), got ${JSON.stringify(t.format)}`);
  if (t.version !== RUN_STATE_VERSION) throw new InputError(file, 'version', `unsupported version ${JSON.stringify(t.version)} (this build reads ${RUN_STATE_VERSION})`);
  if (typeof t.problemHash !== 'string') throw new InputError(file, 'problemHash', 'missing');
}

function checkRegions(regions: unknown, boxes: unknown, file: string, key: string): void {
  if (!Array.isArray(regions)) throw new InputError(file, `${key}regions`, 'must be an array');
  if (!Array.isArray(boxes) || boxes.length !== regions.length) throw new InputError(file, `${key}boxes`, 'must be an array with one box per region');
  regions.forEach((r, i) => {
    const R = r as Record<string, unknown>;
    if (!R || !Array.isArray(R.activeSet) || !Array.isArray(R.A) || !Array.isArray(R.b) || !Array.isArray(R.facets) || !R.chebyshev)
      throw new InputError(file, `${key}regions[${i}]`, 'not a region (activeSet, A, b, facets, chebyshev)');
  });
}

/** `stats.gaveUpAt`, when present, is a list of witness keys ("i,j,k:f"): an error naming the key otherwise. */
function checkWitnesses(stats: unknown, file: string, key: string): void {
  const w = (stats as { gaveUpAt?: unknown } | undefined)?.gaveUpAt;
  if (w === undefined) return;
  if (!Array.isArray(w) || !w.every((x) => typeof x === 'string' && /^[0-9,]*:[0-9]+$/.test(x)))
    throw new InputError(file, `${key}gaveUpAt`, 'must list the facets given up on as "rows:facet" strings (e.g. "0,4,7:2")');
}

/** Parse and check a part file's text. */
export function parsePartJson(text: string, file: string): PartFile {
  const t = parseJson(text, file);
  checkHeader(t, file, PART_FORMAT, 'a part file written by `tessera solve --part`');
  const p = t.part as PartFile['part'] | undefined;
  if (!p || !Number.isInteger(p.index) || !Number.isInteger(p.count) || p.index < 1 || p.index > p.count) throw new InputError(file, 'part', 'must give index and count, 1 ≤ index ≤ count');
  checkRegions(t.regions, t.boxes, file, '');
  if (!t.stats || typeof t.stats !== 'object') throw new InputError(file, 'stats', 'missing');
  checkWitnesses(t.stats, file, 'stats.');
  return t as unknown as PartFile;
}

/** The checkpoint of an exploration state. */
export function makeCheckpoint(loaded: LoadedProblem, part: PartIndex | null, state: ExplorationState, lean = false, subBoxes?: SubBoxProgress): CheckpointFile {
  // one sub-box is the whole box: its covered keys are the state's own
  const split = subBoxes && subBoxes.count > 1 ? { subBoxes } : {};
  return { format: CHECKPOINT_FORMAT, version: RUN_STATE_VERSION, problemHash: problemHash(loaded.raw), part, lean, state, ...split };
}

/** Parse and check a checkpoint's text; `loaded` is the problem it must belong to. */
export function parseCheckpointJson(text: string, file: string, loaded: LoadedProblem): CheckpointFile {
  const t = parseJson(text, file);
  checkHeader(t, file, CHECKPOINT_FORMAT, 'a checkpoint written by `tessera solve --checkpoint`');
  if (t.problemHash !== problemHash(loaded.raw)) throw new InputError(file, 'problemHash', `the checkpoint belongs to another problem than ${loaded.file}`);
  const st = t.state as ExplorationState | undefined;
  if (!st || typeof st !== 'object') throw new InputError(file, 'state', 'missing');
  checkRegions(st.regions, st.boxes, file, 'state.');
  if (!Array.isArray(st.done)) throw new InputError(file, 'state.done', 'must be an array');
  checkWitnesses(st.stats, file, 'state.stats.');
  if (t.subBoxes !== undefined) {
    const sb = t.subBoxes as SubBoxProgress;
    if (!sb || !Number.isInteger(sb.count) || sb.count < 1) throw new InputError(file, 'subBoxes.count', 'must be a whole number ≥ 1');
    if (!Array.isArray(sb.finished) || !sb.finished.every((s) => Number.isInteger(s) && s >= 0 && s < sb.count)) throw new InputError(file, 'subBoxes.finished', `must list sub-box indices 0…${sb.count - 1}`);
    if (!Array.isArray(sb.done) || sb.done.length !== sb.count || !sb.done.every((d) => Array.isArray(d))) throw new InputError(file, 'subBoxes.done', `must hold ${sb.count} lists of keys`);
    if (sb.boxes !== undefined) {
      const dim = Array.isArray(st.boxes) && st.boxes.length ? st.boxes[0].lo.length : null;
      const ok = (v: unknown): v is number[] => Array.isArray(v) && v.every((x) => typeof x === 'number' && Number.isFinite(x)) && (dim === null || v.length === dim);
      if (!Array.isArray(sb.boxes) || sb.boxes.length !== sb.count || !sb.boxes.every((b) => b && ok(b.lower) && ok(b.upper) && b.lower.length === b.upper.length && b.lower.every((l, j) => l <= b.upper[j])))
        throw new InputError(file, 'subBoxes.boxes', `must hold ${sb.count} boxes {lower, upper} of the parameter dimension`);
    }
  }
  return t as unknown as CheckpointFile;
}

/**
 * Join k part files (any order) into the table one run over the whole box writes. Every part must
 * come from the same problem and the same k, each index once; `files` name them in errors. The
 * table is marked incomplete when a part is.
 */
export function joinParts(parts: readonly PartFile[], files: readonly string[]): { table: TableFile; partition: Partition; loaded: LoadedProblem } {
  if (parts.length === 0) throw new InputError('(command line)', 'PART', 'give the part files to join');
  const first = parts[0];
  const k = first.part.count;
  const seen = new Map<number, string>();
  parts.forEach((p, i) => {
    if (p.problemHash !== first.problemHash) throw new InputError(files[i], 'problemHash', `a part of another problem than ${files[0]}`);
    if (p.part.count !== k) throw new InputError(files[i], 'part', `part ${p.part.index} of ${p.part.count}, but ${files[0]} is one of ${k}`);
    if (!!p.lean !== !!first.lean) throw new InputError(files[i], 'lean', `${p.lean ? 'lean' : 'full'} regions, but ${files[0]} holds ${first.lean ? 'lean' : 'full'} ones (solve every part with or every part without --lean)`);
    const again = seen.get(p.part.index);
    if (again) throw new InputError(files[i], 'part', `part ${p.part.index} of ${k} is given twice (also ${again})`);
    seen.set(p.part.index, files[i]);
  });
  const missing: number[] = [];
  for (let i = 1; i <= k; i++) if (!seen.has(i)) missing.push(i);
  if (missing.length) throw new InputError('(command line)', 'PART', `part${missing.length > 1 ? 's' : ''} ${missing.join(', ')} of ${k} missing`);
  const loaded = { ...parseProblem(first.problem, `${files[0]} (key problem)`), name: first.name };
  const formulation = formulate(loaded);
  const partition = joinPartitions(
    formulation.mpqp,
    parts.map((p) => ({ regions: p.regions, boxes: p.boxes, stats: p.stats })),
  );
  return { table: makeTable(loaded, formulation, partition, { lean: !!first.lean }), partition, loaded };
}
